"""Journal style for vibrapol's figures: sizes, fonts, palette, and writing the files.

Sizes follow common journal practice: single column ≈ 3.3 in, double column ≈ 7 in wide, text
7–8 pt at print size.  Colours are from the Okabe–Ito palette (M. Okabe and K. Ito, *Color
Universal Design*, 2008), distinguishable with the common forms of colour blindness.  Edit
:data:`STYLE`, :data:`PALETTE` or :data:`CHANNEL_NAMES` to change every later figure.
"""

from __future__ import annotations

import io
from pathlib import Path
from typing import TYPE_CHECKING, Any

from matplotlib import rc_context
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.layout_engine import ConstrainedLayoutEngine

from vibrapol.errors import VibrapolError
from vibrapol.fileio import FIGURE_FORMATS, check_writable, figure_format, write_atomic

if TYPE_CHECKING:
    from matplotlib.typing import RcKeyType

#: Figure widths in inches.
WIDTHS_IN = {"single": 3.3, "double": 7.0}

#: Colour of each channel (Okabe–Ito).
PALETTE = {
    "vv": "#0072B2",  # blue
    "vh": "#D55E00",  # vermillion
    "nv": "#009E73",  # bluish green
    "nh": "#CC79A7",  # reddish purple
    "vu": "#000000",
    "nu": "#56B4E9",  # sky blue
    "hv": "#E69F00",  # orange
    "hh": "#6B4C9A",
}
#: Colours for channels without an entry in PALETTE.
OTHER_COLOURS = ("#E69F00", "#56B4E9", "#009E73", "#CC79A7", "#000000")
#: Line style of each channel (VV and VH differ also in grey scale).
DASHES = {"vv": "-", "vh": (0, (3, 1)), "nv": "-", "nh": (0, (3, 1))}

#: Display names of the channels.
CHANNEL_NAMES = {
    "vv": "VV (parallel)",
    "vh": "VH (crossed)",
    "hv": "HV",
    "hh": "HH",
    "vu": "V, no analyzer",
    "hu": "H, no analyzer",
    "nv": "natural light, V",
    "nh": "natural light, H",
    "nu": "natural light, no analyzer",
}

#: Matplotlib settings used while a figure is built and saved.
STYLE: dict[RcKeyType, Any] = {
    "font.family": "DejaVu Sans",
    "font.size": 8.0,
    "axes.labelsize": 8.0,
    "axes.linewidth": 0.6,
    "xtick.labelsize": 7.0,
    "ytick.labelsize": 7.0,
    "xtick.major.width": 0.6,
    "ytick.major.width": 0.6,
    "xtick.minor.width": 0.4,
    "ytick.minor.width": 0.4,
    "xtick.major.size": 3.0,
    "ytick.major.size": 3.0,
    "xtick.minor.size": 1.6,
    "ytick.minor.size": 1.6,
    "xtick.direction": "out",
    "ytick.direction": "out",
    "axes.spines.top": False,
    "axes.spines.right": False,
    "legend.fontsize": 7.0,
    "legend.frameon": False,
    "lines.linewidth": 1.0,
    "mathtext.default": "regular",
    "svg.fonttype": "none",
    "svg.hashsalt": "vibrapol",
    "pdf.fonttype": 42,
}

#: Size of band labels in points.
LABEL_PT = 6.5

SHIFT_LABEL = "Raman shift (cm$^{-1}$)"


#: Widths in inches a figure may have (a poster panel at most).
WIDTH_RANGE_IN = (1.0, 40.0)


def figure_width(width: str | float) -> float:
    """Width in inches of ``"single"``, ``"double"`` or a number of inches."""
    if isinstance(width, str):
        if width not in WIDTHS_IN:
            raise VibrapolError(f"figure width must be single, double or inches, got {width!r}")
        return WIDTHS_IN[width]
    inches = float(width)
    lo, hi = WIDTH_RANGE_IN
    if not lo <= inches <= hi:  # also refuses NaN
        raise VibrapolError(f"figure width must be between {lo:g} and {hi:g} inches, got {width}")
    return inches


def new_figure(width_in: float, height_in: float) -> Figure:
    """A Figure with an Agg canvas and constrained layout (no pyplot, no global state)."""
    layout = ConstrainedLayoutEngine(w_pad=0.02, h_pad=0.02, hspace=0.02, wspace=0.02)
    fig = Figure(figsize=(width_in, height_in), layout=layout)
    FigureCanvasAgg(fig)
    return fig


def format_irrep(label: str) -> str:
    """Irrep label with subscripts for mathtext: ``A1g`` → ``A$_{1g}$``, ``E'`` stays ``E'``."""
    if not label:
        return ""
    parts = []
    for one in label.split("/"):
        head, tail = one[:1], one[1:]
        primes = tail[len(tail.rstrip("'\"")) :]
        sub = tail.rstrip("'\"")
        parts.append(f"{head}$_{{{sub}}}${primes}" if sub else f"{head}{primes}")
    return "/".join(parts)


def figure_bytes(fig: Figure, fmt: str, dpi: int = 300) -> bytes:
    """The figure rendered as ``png``, ``svg`` or ``pdf`` (reproducible: no dates embedded)."""
    if fmt not in FIGURE_FORMATS:
        raise VibrapolError(f"figure format must be png, svg or pdf, got {fmt!r}")
    meta = {"png": {"Software": None}, "svg": {"Date": None}, "pdf": {"CreationDate": None}}[fmt]
    buf = io.BytesIO()
    with rc_context(STYLE):
        fig.savefig(buf, format=fmt, dpi=dpi, metadata=meta)
    return buf.getvalue()


def save_figure(fig: Figure, path: str | Path, *, force: bool = False, dpi: int = 300) -> Path:
    """Write the figure to ``path`` (format from the suffix .png/.svg/.pdf) atomically."""
    p = Path(path)
    fmt = figure_format(p)
    check_writable(p, force)
    return write_atomic(p, figure_bytes(fig, fmt, dpi), force=force)
