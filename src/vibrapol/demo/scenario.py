"""The demo's scenario: its molecules, level of theory, bundled data and planned files.

The scenario (made up for the demo) is described in :mod:`vibrapol.demo.run`; the bundled
measured pair is INVENTED data.  :mod:`vibrapol.demo.run` runs the steps and
:mod:`vibrapol.demo.report` turns the results into text and bytes; both import this module,
and neither imports the other's callers.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING

from vibrapol.errors import VibrapolError
from vibrapol.modeset import ModeSet
from vibrapol.ramantable import RamanTable

if TYPE_CHECKING:  # pragma: no cover
    from vibrapol.compare import Assignment, Ranking
    from vibrapol.symmetry import ModeSymmetry

#: The bundled measured pair (package data, INVENTED).
SAMPLE_SPECTRUM = "dichloromethane_liquid_vv_vh_INVENTED.txt"
#: Where ``vibrapol demo`` writes when no ``--output-dir`` is given.
DEFAULT_OUTPUT_DIR = "vibrapol-demo"

CAUTION = (
    "Caution: laser radiation can injure eyes and skin; follow the laser safety rules of your "
    "institution and local regulations.  Dichloromethane and chloroform are volatile and "
    "harmful: handle them in a fume hood according to their safety data sheets and your local "
    "chemical-safety rules.  Computed spectra are predictions, not a substitute for measurement."
)


@dataclass(frozen=True)
class DemoMolecule:
    """One candidate molecule of the demo.

    Attributes
    ----------
    name : str
        File stem of its outputs (``NAME.modes.json`` …).
    label : str
        Name shown in tables and figures.
    structure : str
        Starting structure: a file in ``vibrapol/data`` or a path (any format ASE reads).
    """

    name: str
    label: str
    structure: str


@dataclass(frozen=True)
class DemoScenario:
    """What the demo computes and compares (the default is :data:`DEFAULT_SCENARIO`).

    Attributes
    ----------
    sample : DemoMolecule
        The molecule in the bottle: tabulated, drawn and assigned.
    alternatives : tuple of DemoMolecule
        Other candidates ranked against the same measurement.
    method, basis, route : str
        Engine level and displacement route (see :func:`vibrapol.engine.compute_modes`).
    measured : str
        VV/VH file: a file in ``vibrapol/data`` or a path.
    laser_nm, temperature_k, fwhm_cm1 : float
        Conditions of the measurement, used for the computed spectra.
    range_cm1 : (float, float)
        Range of the computed spectra and figures.
    title : str
        First line of the summary.
    measured_note : str
        What the measured pair is and where its band positions come from (for the summary).
    """

    sample: DemoMolecule
    alternatives: tuple[DemoMolecule, ...]
    method: str = "hf"
    basis: str = "6-31g*"
    route: str = "normal-mode"
    measured: str = SAMPLE_SPECTRUM
    laser_nm: float = 532.0
    temperature_k: float = 298.15
    fwhm_cm1: float = 8.0
    range_cm1: tuple[float, float] = (150.0, 3300.0)
    title: str = (
        "vibrapol demo: which dichloromethane bands can check the polarizer? "
        "(a scenario of our own)"
    )
    measured_note: str = (
        "INVENTED data (band positions of liquid CH2Cl2 from T. Shimanouchi, NSRDS-NBS 39, "
        "1972, from memory; see the file header)"
    )

    @property
    def molecules(self) -> tuple[DemoMolecule, ...]:
        """The sample first, then the alternatives."""
        return (self.sample, *self.alternatives)

    @property
    def level(self) -> str:
        """Method/basis as printed, e.g. ``HF/6-31g*``."""
        method = "HF" if self.method.lower() == "hf" else self.method.upper()
        return f"{method}/{self.basis}"


DEFAULT_SCENARIO = DemoScenario(
    sample=DemoMolecule("dichloromethane", "dichloromethane (CH2Cl2)", "dichloromethane.xyz"),
    alternatives=(DemoMolecule("chloroform", "chloroform (CHCl3)", "chloroform.xyz"),),
)

#: Copy of the measured pair in the output folder (so ``vibrapol match`` can be rerun on it).
MEASURED_COPY = "measured_vv_vh_INVENTED.txt"


def planned_files(scenario: DemoScenario) -> list[tuple[str, str]]:
    """(file name, what it holds) of every file the demo writes, in the order it writes them.

    The checkpoint files are not listed: they are reused, never refused.
    """
    s = scenario.sample.name
    files = [
        (
            f"{m.name}.modes.json",
            f"modes and Raman tensors of {m.label}, {scenario.level}",
        )
        for m in scenario.molecules
    ]
    files += [
        (f"{s}_table.txt", "per-mode Raman table with symmetry species"),
        (f"{s}_table.csv", "the same table as CSV"),
        (f"{s}_spectrum.csv", "computed VV and VH spectra (scaled, broadened)"),
        (f"{s}_sticks.csv", "computed bands (sticks) of those spectra"),
        (f"{s}_vv_vh.svg", "figure: computed VV and VH spectra"),
        (f"{s}_vv_vh.png", "the same figure, 300 dpi"),
        (f"{s}_rho.svg", "figure: computed depolarization ratios"),
        (f"{s}_rho.png", "the same figure, 300 dpi"),
        (MEASURED_COPY, "the measured VV/VH pair used (INVENTED data)"),
        ("assignment.csv", "which computed mode each measured band is"),
        ("match.svg", "figure: measured over computed spectra, band by band"),
        ("match.png", "the same figure, 300 dpi"),
        ("ranking.txt", "candidate molecules ranked against the measurement"),
        ("summary.txt", "this summary and the safety caution"),
    ]
    return files


@dataclass(frozen=True, eq=False)
class DemoResult:
    """What :func:`run_demo` made.

    Attributes
    ----------
    output_dir : Path
    files : tuple of (Path, str)
        Every file written and what it holds.
    modes : dict of str to ModeSet
        Computed modes by molecule name.
    symmetry : ModeSymmetry
        Point group and species of the sample's modes.
    table : RamanTable
        The sample's table (with symmetry).
    assignment : vibrapol.compare.Assignment
        The sample's assignment to the measured bands.
    ranking : vibrapol.compare.Ranking
    seconds_compute : dict of str to float
        Engine wall time per molecule (small when reused from the checkpoint).
    reused : dict of str to bool
        Whether the molecule's results came from the checkpoint.
    summary : str
        The printed summary (``summary.txt`` holds it and :data:`CAUTION`).
    seconds_wall : float
    """

    output_dir: Path
    files: tuple[tuple[Path, str], ...]
    modes: dict[str, ModeSet]
    symmetry: ModeSymmetry
    table: RamanTable
    assignment: Assignment
    ranking: Ranking
    seconds_compute: dict[str, float] = field(default_factory=dict)
    reused: dict[str, bool] = field(default_factory=dict)
    summary: str = ""
    seconds_wall: float = 0.0


def data_path(name: str) -> Path:
    """A file of ``vibrapol/data`` (or ``name`` itself when it is an existing path)."""
    p = Path(name)
    if p.is_file():
        return p
    found = resources.files("vibrapol") / "data" / name
    if not found.is_file():
        raise VibrapolError(
            f"{name}: not a file and not part of vibrapol's data; reinstall vibrapol"
        )
    return Path(str(found))
