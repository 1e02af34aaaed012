"""The conditions a figure was computed for, as a caption line and an axis label.

Every spectrum figure states its laser line, temperature, scattering geometry and sample,
detector convention (with the formula typeset in matplotlib mathtext), scale factor and its
source, line shape and width, and method/basis; the shift axis says whether the wavenumbers are
scaled or unscaled harmonic ones.
"""

from __future__ import annotations

import textwrap

from matplotlib.figure import Figure

from vibrapol.spectrum import Conditions
from vibrapol.spectrum.lineshapes import LineShape

#: Size of the caption text (points).
CAPTION_PT = 5.5

#: Characters of caption per inch of figure width at :data:`CAPTION_PT`.
_CHARS_PER_INCH = 20

_DETECTOR_MATH = {
    "photon": r"photon counting, $I_k \propto \tilde\nu_0(\tilde\nu_0 \mp \tilde\nu_k)^3$",
    "energy": r"energy detector, $I_k \propto (\tilde\nu_0 \mp \tilde\nu_k)^4$",
}


def _plain(text: str) -> str:
    """Text made safe for mathtext (a dollar sign would start maths)."""
    return text.replace("$", r"\$")


def shift_label(conditions: Conditions) -> str:
    """The Raman-shift axis label, saying whether the wavenumbers are scaled."""
    base = r"Raman shift (cm$^{-1}$)"
    scale = conditions.scale
    if scale.is_unscaled:
        return f"{base}, unscaled harmonic"
    if scale.factor_high is None:
        return rf"{base}, harmonic $\times$ {scale.factor:g}"
    return f"{base}, scaled in two regions"


def caption_text(
    conditions: Conditions, lineshape: LineShape | None = None, warned: tuple[str, ...] = ()
) -> str:
    """One paragraph with every condition (and warning), in mathtext where a formula appears."""
    c = conditions
    parts = [
        rf"$\lambda_0$ = {c.laser_nm:g} nm, $T$ = {c.temperature_k:g} K",
        f"{c.geometry_deg}° scattering, sample: {_plain(c.orientation)}",
    ]
    if c.quantity == "intensity":
        parts.append(_DETECTOR_MATH[c.detector])
    elif c.quantity == "cross-section":
        parts.append(r"d$\sigma$/d$\Omega$ (energy based by definition)")
    else:
        parts.append(r"Raman activity $S_k$ (no laser or detector factor)")
    if c.scale.is_unscaled:
        parts.append("wavenumbers unscaled (harmonic)")
    else:
        parts.append(_plain(c.scale.describe(short=True)))
    if lineshape is not None:
        from vibrapol.output.spectra import lineshape_text

        parts.append(_plain(lineshape_text(lineshape)).replace("cm-1", "cm$^{-1}$"))
    parts.append(_plain(c.method) if c.method else "method not recorded by the source")
    parts += [f"warning: {_plain(w)}" for w in warned]
    return "; ".join(parts)


def add_caption(
    fig: Figure,
    conditions: Conditions,
    lineshape: LineShape | None = None,
    warned: tuple[str, ...] = (),
) -> None:
    """Write the conditions (and ``warned``) under the axes (constrained layout makes room)."""
    text = _keep_maths_whole(caption_text(conditions, lineshape, warned))
    lines = textwrap.wrap(text, int(_CHARS_PER_INCH * fig.get_figwidth()))
    lines = [line.replace("\x00", " ") for line in lines]
    fig.supxlabel("\n".join(lines), fontsize=CAPTION_PT, color="#444444", ha="center")


def _keep_maths_whole(text: str) -> str:
    """Spaces inside $…$ replaced by NUL so that wrapping never splits a formula."""
    out, inside, prev = [], False, ""
    for ch in text:
        if ch == "$" and prev != "\\":
            inside = not inside
        out.append("\x00" if inside and ch == " " else ch)
        prev = ch
    return "".join(out)
