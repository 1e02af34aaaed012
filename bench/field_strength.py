"""Field-strength study of the field route: accuracy against the Cartesian route vs F.

For each molecule: optimise once (Cartesian route, symmetry on, h = 0.002 Å, the reference),
then run the field route at the same geometry for a ladder of field strengths, with the
engine's field SCF convergence (orbital gradient 1e-9) and, for comparison, with the
displacement setting (1e-7).  Too small a field lets SCF noise, divided by F², dominate; too
large a field adds the O(F²) contamination from higher field derivatives.

    PYTHONPATH=src python bench/field_strength.py                 # water (C1 stencil), CCl4
    PYTHONPATH=src python bench/field_strength.py --systems water --basis 6-31g*

Prints a table and one JSON line.  Accuracy numbers do not depend on the machine.
"""

from __future__ import annotations

import argparse
import json

import numpy as np

FIELDS_AU = (1e-4, 3e-4, 1e-3, 2e-3, 3e-3, 5e-3, 1e-2, 2e-2)
LOOSE_FIELDS_AU = (3e-4, 1e-3, 3e-3)
SYSTEMS = {"water": "H2O", "ccl4": "CCl4", "methane": "CH4"}


def compare(ref_table, table) -> tuple[float, float]:
    """Max relative activity error and max |Δρ| over modes with visible activity."""
    mask = ref_table.activity > 1e-3 * ref_table.activity.max()
    act = np.abs(table.activity[mask] / ref_table.activity[mask] - 1.0)
    rho = np.abs(table.rho_linear[mask] - ref_table.rho_linear[mask])
    return float(act.max()), float(rho.max())


def study(system: str, method: str, basis: str, symmetry: bool) -> list[dict]:
    from ase.build import molecule

    from vibrapol.engine import fieldgrad
    from vibrapol.engine.compute import run_engine
    from vibrapol.ramantable import raman_table

    ref = run_engine(molecule(SYSTEMS[system]), method, basis, step_ang=0.002, progress=False)
    ref_table = raman_table(ref.modes)
    geometry = (ref.modes.atomic_numbers, ref.modes.coordinates_ang)
    rows = []
    default_tol = fieldgrad.FIELD_SCF_CONV_TOL_GRAD
    for tol, fields in ((default_tol, FIELDS_AU), (1e-7, LOOSE_FIELDS_AU)):
        fieldgrad.FIELD_SCF_CONV_TOL_GRAD = tol
        try:
            for f in fields:
                run = run_engine(
                    geometry,
                    method,
                    basis,
                    optimize=False,
                    route="field",
                    field_au=f,
                    symmetry=symmetry,
                    progress=False,
                )
                act, rho = compare(ref_table, raman_table(run.modes))
                rows.append(
                    {
                        "system": system,
                        "method": method,
                        "basis": basis,
                        "point_group": run.point_group,
                        "field_au": f,
                        "scf_conv_tol_grad": tol,
                        "n_tasks": run.tasks.n_tasks,
                        "max_rel_activity_error": act,
                        "max_abs_rho_error": rho,
                    }
                )
                print(_line(rows[-1]), flush=True)
        finally:
            fieldgrad.FIELD_SCF_CONV_TOL_GRAD = default_tol
    return rows


def _line(r: dict) -> str:
    return (
        f"{r['system']:<7} {r['method']:<5} {r['basis']:<7} {r['point_group']:<4} "
        f"{r['field_au']:>8.1e} {r['scf_conv_tol_grad']:>8.0e} {r['n_tasks']:>3} "
        f"{r['max_rel_activity_error']:>10.2e} {r['max_abs_rho_error']:>10.2e}"
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--systems", default="water,ccl4")
    parser.add_argument("--method", default="hf")
    parser.add_argument("--basis", default="3-21g")
    parser.add_argument(
        "--no-symmetry-for",
        default="water",
        help="systems run with the full 13-point stencil (no symmetry)",
    )
    args = parser.parse_args()
    print(
        f"{'system':<7} {'meth':<5} {'basis':<7} {'PG':<4} {'F/au':>8} {'SCF tol':>8} "
        f"{'n':>3} {'max|dS/S|':>10} {'max|drho|':>10}"
    )
    rows = []
    plain = set(args.no_symmetry_for.split(","))
    for system in args.systems.split(","):
        rows += study(system, args.method, args.basis, symmetry=system not in plain)
    print(json.dumps({"bench": "field_strength", "results": rows}))


if __name__ == "__main__":
    main()
