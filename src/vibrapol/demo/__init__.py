"""The worked scenario of ``vibrapol demo``.

- :mod:`~vibrapol.demo.scenario`: molecules, level of theory, bundled (INVENTED) data, the
  files the demo writes;
- :mod:`~vibrapol.demo.run`: the steps (engine, tables, spectra, assignment, ranking);
- :mod:`~vibrapol.demo.report`: tables, figures and the summary as text and bytes.
"""

from __future__ import annotations

from vibrapol.demo.run import prepare_output_dir, run_demo
from vibrapol.demo.scenario import (
    CAUTION,
    DEFAULT_OUTPUT_DIR,
    DEFAULT_SCENARIO,
    MEASURED_COPY,
    SAMPLE_SPECTRUM,
    DemoMolecule,
    DemoResult,
    DemoScenario,
    data_path,
    planned_files,
)

__all__ = [
    "CAUTION",
    "DEFAULT_OUTPUT_DIR",
    "DEFAULT_SCENARIO",
    "MEASURED_COPY",
    "SAMPLE_SPECTRUM",
    "DemoMolecule",
    "DemoResult",
    "DemoScenario",
    "data_path",
    "planned_files",
    "prepare_output_dir",
    "run_demo",
]
