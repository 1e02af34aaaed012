"""Benchmark of the engine at real size: the Raman job against the frequency-only job,
density fitting, workers, and a model of large conformer batches checked on a local cluster.

Four parts (each prints a table; the last line of the run is one JSON line with every figure):

``--targets``
    For each molecule and basis (B3LYP by default): one whole ``run_engine`` (optimisation from
    the given start, reference SCF, Hessian, derivative tasks; route ``auto``) and, in the same
    process right after it, the frequency-only job at the same start (optimisation + SCF +
    analytic Hessian, nothing else; ``--frequency-first``: before it, to see the order's own
    effect).  The ratio whole / frequency-only is the issue's target (≤ 1.15).  The "scf+a+g"
    column counts the reference gradient only where the reference stage computed one (not
    after an optimisation, whose last gradient's time is reported in the JSON line instead).
    With ``--density-fit`` a third run repeats the Raman job with density fitting
    at the optimised geometry and reports its time and its error against the exact run.
``--batch-check``
    A batch of small molecules on a Dask ``LocalCluster`` of 2 single-thread workers: the
    measured wall time against the wall time the list-scheduling model
    (``bench/batch_model.py``) predicts from the stage and task times the same run measured.
``--predict``
    The predicted wall time of a batch of 50 conformers on 8, 32 and 128 workers, from the
    stage and task costs measured by ``--targets`` for one molecule, for the Hessian + field
    route and for the displacement route (both measured in that run).
``--predict-from FILE``
    The same prediction from the JSON line of an earlier ``--targets`` run of a C1 molecule,
    without running anything: its own route from its measured stages, the displacement route
    from tasks estimated as ``auto`` estimates them (see :func:`predict_from_row`).

    PYTHONPATH=src python bench/engine_scale.py --targets --systems benzene --bases 6-31g*
    PYTHONPATH=src python bench/engine_scale.py --batch-check
    PYTHONPATH=src python bench/engine_scale.py --targets --predict --systems benzene
    PYTHONPATH=src python bench/engine_scale.py --predict-from targets.json

Times are wall-clock seconds on this machine; on shared cores they are contended, so each row
also gives the CPU seconds of both jobs (this process and its reaped workers) and their ratio,
and the load average at its end.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import sys
import tempfile
from pathlib import Path
from time import perf_counter

sys.path.insert(0, str(Path(__file__).resolve().parent))

from batch_model import displacement_route, hessian_route, makespan  # noqa: E402


def _tetrahedral_rest(center, neighbours, ref):  # noqa: ANN001, ANN202
    """Unit vectors from an sp3 centre to its tetrahedral positions not yet taken.

    Two neighbours: the two positions off their plane.  One neighbour: three positions
    staggered about the bond, the first in the plane of the bond and ``ref``.
    """
    import numpy as np

    u = [(n - center) / np.linalg.norm(n - center) for n in neighbours]
    if len(u) == 2:
        d = -(u[0] + u[1])
        d /= np.linalg.norm(d)
        n = np.cross(u[0], u[1])
        n /= np.linalg.norm(n)
        h = np.radians(109.47) / 2
        return [d * np.cos(h) + n * np.sin(h), d * np.cos(h) - n * np.sin(h)]
    a = -u[0]
    p = ref - np.dot(ref, a) * a
    p /= np.linalg.norm(p)
    q = np.cross(a, p)
    t = np.radians(180 - 109.47)
    return [
        a * np.cos(t) + np.sin(t) * (p * np.cos(f) + q * np.sin(f))
        for f in np.radians([0.0, 120.0, 240.0])
    ]


def _octan_2_ol():  # noqa: ANN202
    """Octan-2-ol (C8H18O, 27 atoms, C1) drawn from ideal values, not a minimum.

    Our own drawn start, as a user's sketch would be: an all-trans chain (C–C 1.53 Å, C–H
    1.09 Å, C–O 1.43 Å, O–H 0.96 Å), every angle tetrahedral, every torsion staggered.
    """
    import numpy as np
    from ase import Atoms

    cc, ch, co, oh = 1.53, 1.09, 1.43, 0.96
    half = np.radians(109.47) / 2
    carbons = [
        np.array([k * cc * np.sin(half), (k % 2) * cc * np.cos(half), 0.0]) for k in range(8)
    ]
    symbols, pos = ["C"] * 8, list(carbons)
    for k, c in enumerate(carbons):
        ref = np.array([0.0, 1.0 if k % 2 else -1.0, 0.0])
        nb = [carbons[j] for j in (k - 1, k + 1) if 0 <= j < 8]
        for i, d in enumerate(_tetrahedral_rest(c, nb, ref)):
            if k == 1 and i == 0:  # the hydroxyl on C2
                o = c + co * d
                h = o + oh * _tetrahedral_rest(o, [c], carbons[0] - c)[0]
                symbols += ["O", "H"]
                pos += [o, h]
            else:
                symbols.append("H")
                pos.append(c + ch * d)
    return Atoms("".join(symbols), positions=np.array(pos))


#: Octan-2-ol as a cheap level leaves it: ``_octan_2_ol()`` optimised by this engine at
#: HF/STO-3G (46 gradients, 310 s; atoms moved by up to 0.92 Å), rounded to 1e-4 Å: a start
#: as a user's force field or cheap pre-optimisation would give.  The drawn start itself is
#: the system "octan-2-ol-drawn".
OCTAN_2_OL_STO3G = [
    ("C", -0.1384, 0.0096, -0.0511),
    ("C", 1.1349, 0.8929, 0.0071),
    ("C", 2.4253, 0.0241, -0.0068),
    ("C", 3.7081, 0.8825, -0.0338),
    ("C", 4.9916, 0.0243, 0.0195),
    ("C", 6.2747, 0.8838, -0.0144),
    ("C", 7.5593, 0.0271, 0.0410),
    ("C", 8.8397, 0.8842, 0.0076),
    ("H", -0.1757, -0.6679, 0.7973),
    ("H", -1.0273, 0.6327, -0.0335),
    ("H", -0.1472, -0.5813, -0.9614),
    ("O", 1.1048, 1.7858, 1.1322),
    ("H", 1.0814, 1.1815, 1.9178),
    ("H", 1.1453, 1.5404, -0.8763),
    ("H", 2.3995, -0.6271, -0.8777),
    ("H", 2.4324, -0.6158, 0.8744),
    ("H", 3.6934, 1.5700, 0.8094),
    ("H", 3.7148, 1.4862, -0.9393),
    ("H", 4.9987, -0.6661, -0.8220),
    ("H", 4.9854, -0.5767, 0.9270),
    ("H", 6.2671, 1.5750, 0.8264),
    ("H", 6.2820, 1.4838, -0.9225),
    ("H", 7.5671, -0.6638, -0.8001),
    ("H", 7.5521, -0.5732, 0.9490),
    ("H", 8.8691, 1.5649, 0.8533),
    ("H", 9.7230, 0.2535, 0.0480),
    ("H", 8.8843, 1.4737, -0.9034),
]


def _atoms(system: str):  # noqa: ANN202
    """Starting structures: ASE's G2 geometries, our own naphthalene model, biphenyl and
    octan-2-ol (drawn, or as HF/STO-3G leaves the drawn start)."""
    from ase.build import molecule

    if system == "octan-2-ol-drawn":
        return _octan_2_ol()
    if system == "octan-2-ol":
        from ase import Atoms

        return Atoms(
            [s for s, *_ in OCTAN_2_OL_STO3G], positions=[xyz for _, *xyz in OCTAN_2_OL_STO3G]
        )

    if system == "biphenyl":
        import numpy as np
        from ase import Atoms

        # Two ideal hexagons (C–C 1.40 Å, C–H 1.09 Å) joined by a 1.49 Å bond, rings twisted
        # by 40°: our own drawn start (22 atoms, D2 after optimisation), not a minimum.
        ring, hyd = [], []
        for k in range(6):
            a = np.pi / 3 * k
            ring.append((1.40 * np.cos(a), 1.40 * np.sin(a), 0.0))
            hyd.append((2.49 * np.cos(a), 2.49 * np.sin(a), 0.0))
        ring, hyd = np.array(ring), np.array(hyd)
        shift = np.array([1.40 + 1.49 / 2, 0.0, 0.0])
        left = np.vstack([ring, hyd[1:]]) - shift  # the C atom at +x bonds to the other ring
        t = np.radians(40.0)
        rot = np.array([[1, 0, 0], [0, np.cos(t), -np.sin(t)], [0, np.sin(t), np.cos(t)]])
        right = (-(np.vstack([ring, hyd[1:]]) - shift)) @ rot.T
        pos = np.vstack([left[:6], right[:6], left[6:], right[6:]])
        return Atoms("C12H10", positions=pos)
    if system == "naphthalene":
        sys.path.insert(0, str(Path(__file__).resolve().parent))
        from engine import _atoms as model

        return model("naphthalene")
    return molecule({"benzene": "C6H6", "water": "H2O", "ethanol": "CH3CH2OH"}.get(system, system))


def _cpu_seconds() -> float:
    """User + system CPU seconds of this process and of its finished (waited-for) children.

    The whole job's worker processes are shut down and reaped at its end, so their CPU is in;
    CPU time is far less disturbed than wall time by other work on shared cores.
    """
    import resource

    own = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + kids.ru_utime + kids.ru_stime


def _frequency_only(atoms, method: str, basis: str, **options) -> dict:  # noqa: ANN001
    """Optimisation + reference SCF + analytic Hessian, timed like the whole job's stages."""
    from vibrapol.engine.compute import engine_settings
    from vibrapol.engine.hessian import analytic_hessian
    from vibrapol.engine.optimize import optimize_geometry
    from vibrapol.engine.scf import build_molecule, run_scf

    settings = engine_settings(method, basis, **options)
    z = atoms.get_atomic_numbers()
    t0 = perf_counter()
    opt = optimize_geometry(z, atoms.get_positions(), settings.spec, optimizer=settings.optimizer)
    t1 = perf_counter()
    # from the optimisation's last density, as the whole job's reference SCF starts
    mol = build_molecule(z, opt.coordinates_ang, settings.spec)
    mf = run_scf(mol, settings.spec, dm0=opt.density)
    t2 = perf_counter()
    analytic_hessian(mf)
    t3 = perf_counter()
    return {"seconds_optimize": t1 - t0, "seconds_scf": t2 - t1, "seconds_hessian": t3 - t2}


def _accuracy(ref_modes, modes) -> dict:  # noqa: ANN001
    import numpy as np

    from vibrapol.ramantable import raman_table

    t_ref, t = raman_table(ref_modes), raman_table(modes)
    seen = t_ref.activity > 1e-3 * t_ref.activity.max()
    return {
        "max_dnu_cm1": float(np.abs(t.freqs_cm1 - t_ref.freqs_cm1).max()),
        "max_rel_activity": float(np.abs(t.activity[seen] / t_ref.activity[seen] - 1).max()),
        "max_abs_rho": float(np.abs(t.rho_linear[seen] - t_ref.rho_linear[seen]).max()),
    }


def targets(  # noqa: PLR0913
    system: str,
    method: str,
    basis: str,
    workers: int,
    route: str,
    df: bool,
    frequency_first: bool = False,
) -> dict:
    from vibrapol.engine.compute import run_engine

    atoms = _atoms(system)

    def frequency_job() -> tuple[dict, float, float]:
        t0, c0 = perf_counter(), _cpu_seconds()
        freq = _frequency_only(atoms, method, basis)
        return freq, perf_counter() - t0, _cpu_seconds() - c0

    if frequency_first:  # the order's own effect (imports, caches, the machine's drift)
        freq, freq_wall, freq_cpu = frequency_job()
    with tempfile.TemporaryDirectory() as tmp:
        t0, c0 = perf_counter(), _cpu_seconds()
        run = run_engine(
            atoms, method, basis, workers=workers, route=route, progress=False,
            checkpoint=Path(tmp) / "whole.sqlite",
        )  # fmt: skip
        whole, whole_cpu = perf_counter() - t0, _cpu_seconds() - c0
    if not frequency_first:
        freq, freq_wall, freq_cpu = frequency_job()
    # after an optimisation the reference stage computes no gradient: its time is the
    # optimisation's last gradient, reported but not spent in the whole job
    gradient_spent = run.optimization is None or run.optimization.seconds_gradient is None
    row = {
        "system": system,
        "n_atoms": int(run.modes.n_atoms),
        "method": method,
        "basis": basis,
        "workers": run.workers,
        "route": run.route,
        "route_reason": run.route_reason,
        "point_group": run.point_group,
        "n_tasks": run.tasks.n_tasks,
        "seconds_whole": round(whole, 1),
        "seconds_frequency_only": round(freq_wall, 1),
        "ratio": round(whole / freq_wall, 3),
        "cpu_whole": round(whole_cpu, 1),
        "cpu_frequency_only": round(freq_cpu, 1),
        "cpu_ratio": round(whole_cpu / freq_cpu, 3),
        "load_average": [round(v, 2) for v in os.getloadavg()],
        "whole_stages": {
            "optimize": round(run.seconds_optimize, 1),
            "scf": round(run.seconds_scf, 1),
            "alpha": round(run.seconds_alpha, 1),
            "gradient": round(run.seconds_gradient, 1) if gradient_spent else 0.0,
            "gradient_measured_in_optimisation": None
            if gradient_spent
            else round(run.seconds_gradient, 1),
            "hessian": round(run.seconds_hessian, 1),
            "tasks_wall": round(run.tasks.seconds_wall, 1),
            "tasks_sum": round(run.tasks.seconds_tasks, 1),
            "task_seconds": [round(s, 2) for s in run.tasks.task_seconds],
        },
        "frequency_only_stages": {k: round(v, 1) for k, v in freq.items()},
        "optimizer_gradients": None if run.optimization is None else run.optimization.n_gradients,
        "frequency_first": frequency_first,
    }
    if df:
        geometry = (run.modes.atomic_numbers, run.modes.coordinates_ang)
        # The analytic route has no density-fitted form: compare on the field route then.
        df_route = "field" if run.route == "analytic" else run.route
        t0 = perf_counter()
        fitted = run_engine(
            geometry, method, basis, workers=workers, route=df_route, optimize=False,
            density_fit=True, progress=False,
        )  # fmt: skip
        t_fit = perf_counter() - t0
        t0 = perf_counter()
        exact = run_engine(
            geometry, method, basis, workers=workers, route=df_route, optimize=False,
            progress=False,
        )  # fmt: skip
        t_exact = perf_counter() - t0
        row["density_fit"] = {
            "route": df_route,
            "seconds_exact": round(t_exact, 1),
            "seconds_fitted": round(t_fit, 1),
            "speedup": round(t_exact / t_fit, 2),
            **_accuracy(exact.modes, fitted.modes),
        }
    return row


def batch_check(workers: int = 2) -> dict:
    """A batch on a LocalCluster: measured wall time against the model's prediction."""
    from ase.build import molecule
    from distributed import LocalCluster

    from vibrapol.engine.compute import BatchItem, engine_settings, run_batch

    names = ["H2O", "NH3", "CH4", "H2CO", "CH3OH", "HCN"]
    settings = engine_settings("hf", "6-31g*", route="field")
    items = [BatchItem(molecule(n), n) for n in names]
    with LocalCluster(n_workers=workers, threads_per_worker=1, processes=True) as cluster:
        address = cluster.scheduler_address
        t0 = perf_counter()
        outcomes = run_batch(items, settings, scheduler=address, progress=False)
        wall = perf_counter() - t0
    molecules = []
    for o in outcomes:
        r = o.run
        assert r is not None, o.error
        ref = r.seconds_scf + r.seconds_alpha + r.seconds_gradient
        molecules.append(
            hessian_route(r.seconds_optimize, ref, r.seconds_hessian, r.tasks.task_seconds)
        )
    predicted = makespan(molecules, workers)
    serial = sum(sum(sum(stage) for stage in m) for m in molecules)
    return {
        "molecules": names,
        "method": "HF/6-31G*",
        "route": "field",
        "workers": workers,
        "seconds_measured": round(wall, 2),
        "seconds_predicted": round(predicted, 2),
        "seconds_serial_sum": round(serial, 2),
        "ratio_measured_to_predicted": round(wall / predicted, 3),
    }


def predict(row_field: dict, row_disp: dict, conformers: int = 50) -> list[dict]:
    """Predicted batch wall time for the two routes on 8, 32 and 128 workers."""
    out = []
    for name, row in (("hessian+field", row_field), ("displacement", row_disp)):
        s = row["whole_stages"]
        ref = s["scf"] + s["alpha"] + s["gradient"]
        if name == "displacement":
            mol = displacement_route(s["optimize"], ref, s["task_seconds"])
        else:
            mol = hessian_route(s["optimize"], ref, s["hessian"], s["task_seconds"])
        out += _batch_rows(mol, conformers, route=name)
    return out


def _batch_rows(molecule: list, conformers: int, **label: str) -> list[dict]:
    """The model's wall time of ``conformers`` copies of ``molecule`` on 8, 32 and 128 workers."""
    return [
        {
            **label,
            "workers": w,
            "conformers": conformers,
            "seconds_predicted": round(makespan([molecule] * conformers, w), 1),
        }
        for w in (8, 32, 128)
    ]


def predict_from_row(row: dict, conformers: int = 50) -> list[dict]:
    """Predicted batch wall time from one ``--targets`` row of a C1 molecule.

    The row's own route (``auto``'s choice, usually the analytic one at B3LYP) is modelled
    from its measured stages: optimisation, reference SCF + α, Hessian, then its tasks (the
    analytic tensor is one task after the Hessian).  The displacement route was not run at
    this size (162 tasks of SCF + gradient + dipole + CPHF for 27 atoms would take hours
    here), so its tasks are *estimated* as ``auto`` estimates them:
    ``DISPLACEMENT_TASK_FACTOR`` × (SCF + α + gradient) of the same run, with the gradient's
    time measured in the optimisation; 6N tasks (two per Cartesian coordinate, no symmetry).
    """
    from vibrapol.engine.routes import DISPLACEMENT_TASK_FACTOR

    if row["point_group"] != "C1":
        raise ValueError("the displacement estimate counts 6N tasks: C1 molecules only")
    s = row["whole_stages"]
    gradient = s["gradient"] or s["gradient_measured_in_optimisation"]
    reference = s["scf"] + s["alpha"] + s["gradient"]
    t_task = DISPLACEMENT_TASK_FACTOR * (s["scf"] + s["alpha"] + gradient)
    n_disp = 6 * row["n_atoms"]
    models = (
        (f"hessian+{row['route']}", "measured",
         hessian_route(s["optimize"], reference, s["hessian"], s["task_seconds"])),
        ("displacement", f"estimated: {n_disp} tasks of {t_task:.0f} s",
         displacement_route(s["optimize"], s["scf"] + s["alpha"], [t_task] * n_disp)),
    )  # fmt: skip
    return [
        r
        for name, costs, mol in models
        for r in _batch_rows(mol, conformers, route=name, costs=costs)
    ]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--targets", action="store_true")
    parser.add_argument("--batch-check", action="store_true")
    parser.add_argument("--predict", action="store_true")
    parser.add_argument(
        "--predict-from",
        metavar="FILE",
        help="print the 50-conformer predictions from the JSON line of an earlier --targets run",
    )
    parser.add_argument("--systems", default="benzene,naphthalene,octan-2-ol")
    parser.add_argument("--bases", default="6-31g*,def2-svp")
    parser.add_argument("--method", default="b3lyp")
    parser.add_argument("--workers", default="2")
    parser.add_argument("--density-fit", action="store_true")
    parser.add_argument(
        "--frequency-first",
        action="store_true",
        help="run the frequency-only job before the whole job (default after it)",
    )
    args = parser.parse_args()
    figures: dict = {"bench": "engine-scale"}
    if args.targets or args.predict:
        rows = []
        print(
            f"{'system':<12} {'basis':<8} {'wk':>2} {'route':<13} {'tasks':>5} {'opt':>6} "
            f"{'scf+a+g':>7} {'hess':>6} {'tasks':>6} {'whole':>7} {'freq':>7} {'ratio':>6} "
            f"{'cpu':>6}"
        )
        routes = ["auto"] + (["field", "displacement"] if args.predict else [])
        for system in args.systems.split(","):
            for basis in args.bases.split(","):
                for w in (int(x) for x in args.workers.split(",")):
                    for route in routes:
                        r = targets(
                            system, args.method, basis, w, route, args.density_fit,
                            args.frequency_first,
                        )  # fmt: skip
                        rows.append(r)
                        s = r["whole_stages"]
                        print(
                            f"{system:<12} {basis:<8} {w:>2} {r['route']:<13} {r['n_tasks']:>5} "
                            f"{s['optimize']:>6.1f} {s['scf'] + s['alpha'] + s['gradient']:>7.1f} "
                            f"{s['hessian']:>6.1f} {s['tasks_wall']:>6.1f} "
                            f"{r['seconds_whole']:>7.1f} {r['seconds_frequency_only']:>7.1f} "
                            f"{r['ratio']:>6.2f} {r['cpu_ratio']:>6.2f}",
                            flush=True,
                        )
                        if "density_fit" in r:
                            print(f"    density fitting: {r['density_fit']}", flush=True)
        figures["targets"] = rows
        if args.predict:
            by_route = {r["route"]: r for r in rows}
            if "field" in by_route and "displacement" in by_route:
                figures["predict"] = predict(by_route["field"], by_route["displacement"])
                for p in figures["predict"]:
                    print(
                        f"50 conformers, {p['route']:<14} {p['workers']:>4} workers: "
                        f"{p['seconds_predicted']:>9.1f} s",
                        flush=True,
                    )
    if args.predict_from:
        last = Path(args.predict_from).read_text().strip().splitlines()[-1]
        figures["predict_from"] = args.predict_from
        figures["predict"] = []
        for row in json.loads(last)["targets"]:
            for p in predict_from_row(row):
                figures["predict"].append({"system": row["system"], "basis": row["basis"], **p})
                print(
                    f"50 conformers of {row['system']} {row['method']}/{row['basis']}, "
                    f"{p['route']:<18} {p['workers']:>4} workers: "
                    f"{p['seconds_predicted']:>9.1f} s ({p['costs']})",
                    flush=True,
                )
    if args.batch_check:
        check = batch_check()
        figures["batch_check"] = check
        print(
            f"batch of {len(check['molecules'])} on a LocalCluster of {check['workers']}: measured "
            f"{check['seconds_measured']} s, model {check['seconds_predicted']} s "
            f"(serial sum {check['seconds_serial_sum']} s)",
            flush=True,
        )
    figures["machine"] = {
        "cores": os.cpu_count(),
        "python": platform.python_version(),
        "load_average_1min": round(os.getloadavg()[0], 2),
    }
    print(json.dumps(figures))


if __name__ == "__main__":
    main()
