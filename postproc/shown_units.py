"""The units results are shown in: SI or US customary, for every file, the terminal and the report.

The engine works in mm, N, N·mm and MPa (see README, "Units inside the tool"). Every output turns
those into one of two systems, chosen by ``[output] units`` or ``--units``; by default the system
of the input's moment unit, so a model given in kip·ft is answered in kip·ft.

Factors are the exact definitions of NIST SP 811 (2008), Appendix B, through :mod:`readers.units`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
from flangewise.readers import units as input_units
from flangewise.readers.settings import Settings, Units

System = Literal["si", "us"]
SYSTEMS: tuple[str, ...] = ("si", "us")

#: What each system is called where the outputs name it.
SYSTEM_WORDS = {
    "si": "SI (m, mm, kN, kN·m, MPa)",
    "us": "US customary (ft, in, kip, kip·ft, ksi)",
}


@dataclass(frozen=True)
class ShownUnits:
    """One output unit system: the name of each unit and its size in the internal units.

    Attributes:
        system: "si" or "us".
        length: unit of positions and lengths along members ("m" or "ft").
        section: unit of plate dimensions and section properties ("mm" or "in"; areas,
            moduli and inertias in its powers).
        force: unit of forces ("kN" or "kip").
        moment: unit of moments ("kN·m" or "kip·ft").
        stress: unit of stresses and moduli ("MPa" or "ksi").
        length_mm: one ``length`` in mm.
        section_mm: one ``section`` in mm.
        force_n: one ``force`` in N.
        moment_nmm: one ``moment`` in N·mm.
        stress_mpa: one ``stress`` in MPa.
    """

    system: System
    length: str
    section: str
    force: str
    moment: str
    stress: str
    length_mm: float
    section_mm: float
    force_n: float
    moment_nmm: float
    stress_mpa: float

    def to_length(self, mm: float | np.ndarray) -> float | np.ndarray:
        """A length [mm] in ``length`` units."""
        return mm / self.length_mm

    def to_section(self, mm: float | np.ndarray, power: int = 1) -> float | np.ndarray:
        """A section quantity [mm^power] (a dimension, area, modulus, inertia) in ``section``."""
        return mm / self.section_mm**power

    def to_moment(self, nmm: float | np.ndarray) -> float | np.ndarray:
        """A moment [N·mm] in ``moment`` units."""
        return nmm / self.moment_nmm

    def to_force(self, n: float | np.ndarray) -> float | np.ndarray:
        """A force [N] in ``force`` units."""
        return n / self.force_n

    def to_stress(self, mpa: float | np.ndarray) -> float | np.ndarray:
        """A stress [MPa] in ``stress`` units."""
        return mpa / self.stress_mpa

    @property
    def words(self) -> str:
        """The system as the outputs name it."""
        return SYSTEM_WORDS[self.system]


SI = ShownUnits(
    system="si",
    length="m",
    section="mm",
    force="kN",
    moment="kN·m",
    stress="MPa",
    length_mm=input_units.LENGTH_TO_MM["m"],
    section_mm=input_units.LENGTH_TO_MM["mm"],
    force_n=input_units.FORCE_TO_N["kN"],
    moment_nmm=input_units.moment_to_nmm("kN*m"),
    stress_mpa=input_units.STRESS_TO_MPA["MPa"],
)

US = ShownUnits(
    system="us",
    length="ft",
    section="in",
    force="kip",
    moment="kip·ft",
    stress="ksi",
    length_mm=input_units.LENGTH_TO_MM["ft"],
    section_mm=input_units.LENGTH_TO_MM["in"],
    force_n=input_units.FORCE_TO_N["kip"],
    moment_nmm=input_units.moment_to_nmm("kip*ft"),
    stress_mpa=input_units.STRESS_TO_MPA["ksi"],
)

BY_SYSTEM: dict[str, ShownUnits] = {"si": SI, "us": US}

#: Input force units of the US customary system; any other is SI.
_US_FORCES = frozenset({"lbf", "kip"})


def input_system(units: Units) -> System:
    """The system of the input: US customary when its moment unit's force is lbf or kip.

    The moment unit decides because moments are what the results are mostly about; a model whose
    moments are in kip·ft (or kip·in, lbf·ft) is answered in US customary units.
    """
    force = units.moment.replace("·", "*").replace("-", "*").replace(".", "*").split("*")[0]
    return "us" if force.strip() in _US_FORCES else "si"


def shown_units(choice: str | None, units: Units) -> ShownUnits:
    """The output units: ``choice`` ("si", "us") when given, else the input's own system."""
    return BY_SYSTEM[choice or input_system(units)]


def run_units(choice: str | None, settings: Settings) -> ShownUnits:
    """A run's output units: the command line's, else ``[output] units``, else the input's."""
    return shown_units((choice or "").lower() or settings.output_units, settings.units)
