"""The two single-shot stages of a run, each stored in the checkpoint when it finishes.

* optimisation of the input structure (:mod:`vibrapol.engine.optimize`);
* the reference calculation at the final geometry: SCF, analytic Hessian, CPHF α; with
  ``with_hessian=False`` the Hessian is left out and :func:`add_hessian` computes it as a
  stage of its own (``--route auto`` decides whether it is needed from the other timings).
"""

from __future__ import annotations

from dataclasses import replace
from time import perf_counter

import numpy as np
from numpy.typing import ArrayLike

from vibrapol.engine.checkpoint import CheckpointStore, task_key
from vibrapol.engine.evaluate import ReferenceResult, reference_calculation, reference_hessian
from vibrapol.engine.fieldgrad import FIELD_SCF_CONV_TOL, FIELD_SCF_CONV_TOL_GRAD
from vibrapol.engine.optimize import OptimizationResult, optimize_geometry
from vibrapol.engine.scf import MethodSpec


def optimized(
    atomic_numbers: np.ndarray,
    coordinates_ang: np.ndarray,
    spec: MethodSpec,
    store: CheckpointStore | None,
) -> tuple[OptimizationResult, float, bool]:
    """Optimised geometry (from the store when present), its wall time, and whether reused."""
    key = task_key("optimize", atomic_numbers, coordinates_ang, spec)
    stored = store.get(key) if store is not None else None
    if stored is not None:
        result = OptimizationResult(
            coordinates_ang=stored["coordinates_ang"],
            energy_hartree=float(stored["energy_hartree"]),
            max_force_hartree_bohr=float(stored["max_force_hartree_bohr"]),
            n_steps=int(stored["n_steps"]),
            n_gradients=int(stored["n_gradients"]),
        )
        return result, float(stored["seconds"]), True
    t0 = perf_counter()
    result = optimize_geometry(atomic_numbers, coordinates_ang, spec)
    seconds = perf_counter() - t0
    if store is not None:
        arrays: dict[str, ArrayLike] = {
            "coordinates_ang": result.coordinates_ang,
            "energy_hartree": result.energy_hartree,
            "max_force_hartree_bohr": result.max_force_hartree_bohr,
            "n_steps": result.n_steps,
            "n_gradients": result.n_gradients,
            "seconds": seconds,
        }
        store.put(key, "optimize", "optimisation", arrays, seconds)
    return result, seconds, False


_REFERENCE_FIELDS = ("hessian_hartree_bohr2", "alpha_ang3", "density", "gradient_hartree_bohr")
_REFERENCE_TIMES = ("seconds_scf", "seconds_hessian", "seconds_alpha", "seconds_gradient")


def reference(
    atomic_numbers: np.ndarray,
    coordinates_ang: np.ndarray,
    spec: MethodSpec,
    store: CheckpointStore | None,
    with_hessian: bool = True,
) -> tuple[ReferenceResult, bool]:
    """SCF, Hessian and α at the reference geometry (from the store when present).

    With ``with_hessian`` False the Hessian is not computed (a stored one is still returned).
    """
    extra = {
        "reference_conv": [FIELD_SCF_CONV_TOL, FIELD_SCF_CONV_TOL_GRAD],
        "grid_response": True,
    }
    key = task_key("reference", atomic_numbers, coordinates_ang, spec, **extra)
    stored = store.get(key) if store is not None else None
    if stored is not None and all(k in stored for k in _REFERENCE_FIELDS + _REFERENCE_TIMES):
        return ReferenceResult(
            energy_hartree=float(stored["energy_hartree"]),
            hessian_hartree_bohr2=stored["hessian_hartree_bohr2"],
            alpha_ang3=stored["alpha_ang3"],
            density=stored["density"],
            gradient_hartree_bohr=stored["gradient_hartree_bohr"],
            seconds_scf=float(stored["seconds_scf"]),
            seconds_hessian=float(stored["seconds_hessian"]),
            seconds_alpha=float(stored["seconds_alpha"]),
            seconds_gradient=float(stored["seconds_gradient"]),
        ), True
    if not with_hessian:
        return _reference_point(atomic_numbers, coordinates_ang, spec, store, extra)
    result = reference_calculation(atomic_numbers, coordinates_ang, spec)
    if store is not None:
        arrays = {
            k: getattr(result, k) for k in (*_REFERENCE_FIELDS, *_REFERENCE_TIMES, "energy_hartree")
        }
        seconds = sum(getattr(result, k) for k in _REFERENCE_TIMES)
        store.put(key, "reference", "reference SCF, Hessian, alpha", arrays, seconds)
    return result, False


_POINT_FIELDS = ("alpha_ang3", "density", "gradient_hartree_bohr", "energy_hartree")
_POINT_TIMES = ("seconds_scf", "seconds_alpha", "seconds_gradient")


def _reference_point(z, coords, spec, store, extra):  # noqa: ANN001, ANN202
    """The reference stage without the Hessian, stored under its own key."""
    key = task_key("reference-point", z, coords, spec, **extra)
    stored = store.get(key) if store is not None else None
    if stored is not None and all(k in stored for k in _POINT_FIELDS + _POINT_TIMES):
        values = {k: stored[k] for k in _POINT_FIELDS[:3]}
        times = {k: float(stored[k]) for k in _POINT_TIMES}
        energy = float(stored["energy_hartree"])
        return ReferenceResult(energy, None, **values, **times), True
    result = reference_calculation(z, coords, spec, with_hessian=False)
    if store is not None:
        arrays = {k: getattr(result, k) for k in _POINT_FIELDS + _POINT_TIMES}
        seconds = sum(getattr(result, k) for k in _POINT_TIMES)
        store.put(key, "reference", "reference SCF, alpha, gradient", arrays, seconds)
    return result, False


def add_hessian(
    atomic_numbers: np.ndarray,
    coordinates_ang: np.ndarray,
    spec: MethodSpec,
    store: CheckpointStore | None,
    ref: ReferenceResult,
) -> tuple[ReferenceResult, bool]:
    """``ref`` with the analytic Hessian (from the store when present), and whether reused."""
    if ref.hessian_hartree_bohr2 is not None:
        return ref, True
    key = task_key("hessian", atomic_numbers, coordinates_ang, spec, grid_response=True)
    stored = store.get(key) if store is not None else None
    if stored is not None and "hessian_hartree_bohr2" in stored and "seconds" in stored:
        hessian, seconds, reused = stored["hessian_hartree_bohr2"], float(stored["seconds"]), True
    else:
        t0 = perf_counter()
        hessian = reference_hessian(atomic_numbers, coordinates_ang, spec, ref.density)
        seconds, reused = perf_counter() - t0, False
        if store is not None:
            arrays = {"hessian_hartree_bohr2": hessian, "seconds": seconds}
            store.put(key, "hessian", "analytic Hessian", arrays, seconds)
    return replace(ref, hessian_hartree_bohr2=hessian, seconds_hessian=seconds), reused
