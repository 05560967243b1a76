"""The validated model: the data contract between ``readers`` and ``engine``.

All values are in the internal unit system: mm, N, N·mm, MPa. The vertical axis is z.

Tables (pandas DataFrames):

``nodes``      index ``id`` (str); columns ``x``, ``y``, ``z`` [mm].
``elements``   index ``id`` (str); columns ``start``, ``end`` (node ids), ``section`` (name),
               ``member`` (the user's own grouping, str or missing), ``length`` [mm],
               ``backwards`` (bool, see :func:`drawn_backwards`), ``row`` (its spreadsheet row in
               the elements file, for messages).
``sections``   index ``name`` (str, as the sections or the elements table writes it); columns
               ``d``, ``b``, ``tf``, ``tw``, ``r`` [mm] (``r`` = 0 when not given), ``fy``
               [MPa]; the overrides ``A`` [mm²], ``Ix``, ``Iy`` [mm⁴], ``Sx``, ``Zx`` [mm³],
               ``J`` [mm⁴], ``Cw`` [mm⁶] (NaN = computed from the plates); ``source`` (str):
               ``"catalogue: <table label>"`` (a shipped shape: its plates and tabulated
               properties, see ``readers.catalogue``), ``"plates"`` or ``"given properties"``
               (a sections row giving at least one override); ``replaces`` (str): the catalogue
               shape a sections row with plates replaces, "" when none. Rows of the sections
               table come first, then the catalogue shapes that only elements name.
``forces``     columns ``element`` (categorical whose categories are exactly ``elements.index``, so
               the codes are element row numbers), ``combination`` (categorical), ``position`` [mm]
               from the element's start node, in [0, length]; every element has a station exactly
               at 0 and exactly at its length in every combination (positions within
               :func:`position_tolerance` of an end are snapped onto it), ``M`` [N·mm], positive
               when it compresses the top flange; where given: ``N`` [N], ``V`` [N],
               ``M_minor`` [N·mm], ``T`` [N·mm], carried with the file's own signs.
               Rows are in file order.
``braces``     columns ``node`` (id), ``flange`` ("top", "bottom" or "both").
``supports``   columns ``node`` (id), ``restrains`` (the file's own text, unchanged, such as
               "ux uy uz", "DX DZ" or "fixed"; "all" when not given). A support braces both
               flanges whatever it restrains.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from flangewise.readers.settings import Settings

#: Two nodes closer than this are the same point [mm] (common practice: well below any real
#: connection offset, well above export rounding of coordinates in mm).
COINCIDENT_MM = 1.0

#: A position may exceed its element by this fraction of the element's length before it is an
#: error; within it the position is clamped (export rounding of positions and lengths). Every
#: element needs a station this close to each of its ends (see :func:`position_tolerance`).
POSITION_TOLERANCE = 1.0e-3

#: The tolerance above is never less than this [mm] (common practice: programs export positions
#: rounded to the mm, which moves a station by up to 0.5 mm; 1 mm covers that with room for the
#: rounding of the node coordinates the length comes from).
POSITION_TOLERANCE_MM = 1.0

#: Two force stations along one member closer than this [mm] are one station (the same place
#: exported twice, or two elements' ends at one node seen through rounding). Half of
#: ``POSITION_TOLERANCE_MM``: stations that close to an element end were already snapped onto it,
#: so merging never moves a station past a node.
STATION_MERGE_MM = 0.5

#: A direction component smaller than this fraction of the length counts as zero when deciding
#: whether an element is drawn backwards.
DIRECTION_TOLERANCE = 1.0e-6


def position_tolerance(length: np.ndarray) -> np.ndarray:
    """Return, per element, how far a station may lie from an end and still be that end [mm].

    ``POSITION_TOLERANCE`` of the length, and never less than ``POSITION_TOLERANCE_MM``.

    Args:
        length: element lengths [mm].
    """
    return np.maximum(
        POSITION_TOLERANCE * np.asarray(length, dtype=np.float64), POSITION_TOLERANCE_MM
    )


def drawn_backwards(dx: np.ndarray, dy: np.ndarray, dz: np.ndarray) -> np.ndarray:
    """Return, per element, whether it is drawn backwards.

    An element is drawn forwards when it points towards +x; when it is square to x, towards +y;
    when it is vertical, upwards (+z). Components below ``DIRECTION_TOLERANCE`` times the length
    count as zero. This is the convention the ``backwards_flips_sign`` setting refers to.

    Args:
        dx: end minus start coordinate along x [mm], per element.
        dy: the same along y [mm].
        dz: the same along z (vertical) [mm].
    """
    length = np.sqrt(dx * dx + dy * dy + dz * dz)
    tol = DIRECTION_TOLERANCE * length
    along_x = np.abs(dx) > tol
    along_y = ~along_x & (np.abs(dy) > tol)
    return np.where(along_x, dx < 0, np.where(along_y, dy < 0, dz < 0))


@dataclass(frozen=True)
class Model:
    """A validated frame model in internal units (see the module docstring for the contract)."""

    nodes: pd.DataFrame
    elements: pd.DataFrame
    sections: pd.DataFrame
    forces: pd.DataFrame
    braces: pd.DataFrame
    supports: pd.DataFrame
    settings: Settings

    @property
    def combinations(self) -> list[str]:
        """Load combination names, in the order the categories hold them."""
        return [str(c) for c in self.forces["combination"].cat.categories]
