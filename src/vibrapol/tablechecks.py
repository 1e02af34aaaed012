"""What a Raman table must say about its own data: missing modes, imaginary modes, zeros.

Each check returns text for the table's header (``warnings`` also go to stderr); none of them
changes a number.  :func:`forbidden_noise` decides which values are *shown* as 0.
"""

from __future__ import annotations

import numpy as np

from vibrapol.modeset import ModeSet
from vibrapol.vibrations import is_linear

#: A Raman-forbidden mode (by its species) whose activity is at most this fraction of the
#: largest activity is shown as 0: its value is numerical noise.  Measured in the real outputs
#: of ../shared/qc-outputs (dvb, C2h): analytic derivatives leave forbidden modes at ≤ 2e-20 of
#: the strongest band (Gaussian 09/16, GAMESS-UK), DALTON and Firefly ≤ 6e-10, and ORCA 5.0.0's
#: numerically differentiated polarizabilities ≤ 4.3e-6; the weakest allowed band in those files
#: is 1.4e-3 of the strongest.  1e-5 lies above all the noise and two decades below any band.
FORBIDDEN_NOISE_FRACTION = 1.0e-5

#: More imaginary modes than this make a warning (one alone is a note: a transition state has
#: exactly one, and one small imaginary soft mode is common numerical noise).
IMAGINARY_NOTE_MAX = 1


def expected_vibrations(modes: ModeSet, linear: bool | None = None) -> int:
    """3N − 6, or 3N − 5 for a linear molecule (0 for a single atom)."""
    n = modes.n_atoms
    if n < 2:
        return 0
    if linear is None:
        linear = _is_linear(modes)
    return 3 * n - (5 if linear else 6)


def _is_linear(modes: ModeSet) -> bool:
    masses = modes.masses_da
    assert masses is not None  # a ModeSet fills in default masses
    return is_linear(modes.coordinates_ang, masses)


def _where(modes: ModeSet) -> str:
    return modes.provenance.source_file or "mode set"


def missing_modes_warning(modes: ModeSet, linear: bool | None = None) -> str:
    """'' when the source has every vibration, else a warning naming how many are missing."""
    if modes.n_atoms < 2:
        return ""
    if linear is None:
        linear = _is_linear(modes)
    expected = expected_vibrations(modes, linear)
    have = modes.n_modes
    if have >= expected:
        return ""
    return (
        f"{_where(modes)}: {have} of the {expected} vibrations ({'3N-5' if linear else '3N-6'}, "
        f"N = {modes.n_atoms}) are in the source; {expected - have} are missing (an incomplete "
        "or failed job, or a calculation restricted to some modes)"
    )


def imaginary_modes_text(modes: ModeSet) -> tuple[str, bool]:
    """(text, is_warning) about imaginary modes; ('', False) when there are none."""
    imag = modes.freqs_cm1[modes.freqs_cm1 < 0.0]
    if imag.size == 0:
        return "", False
    listed = ", ".join(f"{-f:.1f}i" for f in np.sort(imag))
    text = (
        f"{_where(modes)}: {imag.size} of {modes.n_modes} modes are imaginary ({listed} cm-1, "
        "shown as negative wavenumbers): the structure is not a minimum"
    )
    return text, imag.size > IMAGINARY_NOTE_MAX


def all_zero_warning(modes: ModeSet, activity: np.ndarray) -> str:
    """'' unless every activity is exactly zero (Raman rows filled with zeros)."""
    s = np.asarray(activity, dtype=float)
    if s.size == 0 or not np.all(np.isfinite(s)) or np.any(s != 0.0):
        return ""
    return (
        f"{_where(modes)}: every Raman activity is zero; the source's Raman rows hold zeros, "
        "which usually means Raman intensities were not computed, not that no band scatters"
    )


def forbidden_noise(
    activity: np.ndarray, raman_active: np.ndarray | None, irreps: tuple[str, ...], group: str
) -> tuple[np.ndarray, list[str]]:
    """Which modes to *show* with zero activity, and the notes that say so.

    Returns
    -------
    (shown_zero, notes)
        ``shown_zero`` is True for Raman-forbidden modes (by species) whose activity is at most
        :data:`FORBIDDEN_NOISE_FRACTION` of the largest; ``notes`` explains it, and names the
        forbidden modes above that level (mixing or a slightly unsymmetric geometry).
    """
    s = np.asarray(activity, dtype=float)
    zero = np.zeros(s.shape, dtype=bool)
    if raman_active is None or s.size == 0 or not np.all(np.isfinite(s)):
        return zero, []
    top = float(np.max(np.abs(s)))
    if top <= 0.0:
        return zero, []
    forbidden = ~np.asarray(raman_active, dtype=bool)
    zero = forbidden & (np.abs(s) <= FORBIDDEN_NOISE_FRACTION * top)
    notes = []
    if np.any(zero & (s != 0.0)):
        largest = float(np.max(np.abs(s[zero])) / top)
        notes.append(
            f"{int(zero.sum())} modes Raman-forbidden in {group} are shown in the text table with "
            f"activity 0 (and no ratio): their values, at most {largest:.1g} of the strongest "
            f"band, are below the numerical noise of {FORBIDDEN_NOISE_FRACTION:g} of it; CSV and "
            "JSON keep the numbers as read"
        )
    loud = forbidden & ~zero & (np.abs(s) > 0.0)
    if np.any(loud):
        listed = ", ".join(f"{k + 1} ({irreps[k]}, {s[k] / top:.2g})" for k in np.flatnonzero(loud))
        notes.append(
            f"Raman-forbidden in {group} but with activity above the noise (fraction of the "
            f"strongest band): modes {listed}; shown as the source gives them"
        )
    return zero, notes
