"""Members, segments and segment diagrams of a model in one call."""

from __future__ import annotations

from dataclasses import dataclass

from flangewise.engine.diagrams import SegmentDiagrams, segment_diagrams
from flangewise.engine.members import Members, build_members
from flangewise.engine.segments import Segments, build_segments
from flangewise.readers.model import Model


@dataclass(frozen=True)
class Layout:
    """What the buckling check needs from the model's geometry and forces."""

    members: Members
    segments: Segments
    diagrams: SegmentDiagrams


def build_layout(model: Model) -> Layout:
    """Chain members, split segments per flange, cut the diagrams per segment and combination."""
    settings = model.settings.members
    members = build_members(model, settings)
    segments = build_segments(model, members, settings)
    return Layout(members, segments, segment_diagrams(model, members, segments))
