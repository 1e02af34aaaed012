"""Compute the example mode file used for the figures in this folder.

Dichloromethane (CH2Cl2), B3LYP/6-31G(d) with Cartesian d functions, optimised with PySCF;
harmonic modes from the analytic Hessian, ∂α/∂x by central differences (0.005 Å) of the
coupled-perturbed static polarizability.  Run from the repository root:

    PYTHONPATH=src python docs/figures/make_example_modes.py

It writes docs/figures/ch2cl2_b3lyp_631gd.modes.json (a few minutes on two cores).
"""

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests"))

from spectrum_helpers import pyscf_modeset  # noqa: E402
from vibrapol.sources.modes_json import write_modes_json  # noqa: E402

# Starting structure: C at the origin, C2 axis along z, H in the yz plane, Cl in the xz plane.
START = """
C   0.0000  0.0000  0.7600
H   0.0000  0.8950  1.3700
H   0.0000 -0.8950  1.3700
Cl  1.4800  0.0000 -0.2300
Cl -1.4800  0.0000 -0.2300
"""

if __name__ == "__main__":
    modes = pyscf_modeset(START, "6-31g*", xc="b3lyp", cart=True)
    out = ROOT / "docs" / "figures" / "ch2cl2_b3lyp_631gd.modes.json"
    write_modes_json(modes, out, force=True)
    print(out, modes.freqs_cm1.round(1))
