"""What every figure shares: the house style, file names made safe, a figure on its own Agg canvas
(pyplot is never touched), saving by suffix, GHz axes.
"""

from __future__ import annotations

import functools
import io
import re
from pathlib import Path

from femodes.atomic import replacing
from femodes.errors import FemodesError


def _style():
    """The house style: colours and sizes (a function, so nothing is module-level state)."""
    return {
        "cmap": "cividis",          # perceptually uniform, readable in grey and by colour-blind readers
        "outline": "#16202a",       # near-black slate for the metal wall
        "outline_width": 1.8,
        "conductor": "#a3a7ab",     # inner conductors: brushed-metal grey
        "metal": "#dfe1e3",         # the wall material around the guide: a lighter grey
        "arrow": "#ffffff",
        "arrow_edge": "#1a1a1a",
        "stream": "#f4f1ea",
        "family": {                 # marker shape and colour per family (mode chart)
            "TE": ("o", "#1d6f8a"),
            "TM": ("s", "#c0562f"),
            "TEM": ("D", "#5a3f87"),
        },
        "band": "#f0dfa6",
        "band_edge": "#b08a1e",
        "text": "#333333",
    }


def safe_name(label):
    """A file-name-safe form of a mode label: 'TE1 (x odd, y even)' -> 'TE1_x-odd_y-even'."""
    s = str(label).strip()
    s = re.sub(r"\(([^)]*)\)", lambda m: "_" + m.group(1), s)        # bracketed part -> suffix
    s = re.sub(r"\s*,\s*", "_", s)                                      # list separators
    s = re.sub(r"\s+", "-", s)                                          # words inside a part
    s = re.sub(r"[^A-Za-z0-9_.+-]", "", s)
    s = re.sub(r"_[-_]+|-[-_]+", "_", s).strip("_-.")
    return s or "mode"


def _new_figure(width, height, layout="compressed"):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), layout=layout)
    FigureCanvasAgg(fig)
    # a notebook shows the figure as an image by itself: our figures never touch pyplot, so
    # IPython's inline-backend formatter for Figures is not always registered
    fig._repr_png_ = functools.partial(_png, fig)
    return fig


def _png(fig):
    """The figure as PNG bytes (100 dpi, cropped to its contents): what a notebook shows."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=100, bbox_inches="tight")
    return buf.getvalue()


def _save(fig, path, dpi=200):
    """Save ``fig`` to ``path``; the format follows the suffix (.png, .svg, .pdf)."""
    path = Path(path)
    fmt = path.suffix.lower().lstrip(".")
    if fmt not in ("png", "svg", "pdf"):
        raise FemodesError(f"cannot save a figure as {path.name!r}: use a .png, .svg or .pdf file name")
    path.parent.mkdir(parents=True, exist_ok=True)
    kw = {"dpi": dpi} if fmt == "png" else {"dpi": 150}   # dpi of the embedded colour image in svg/pdf
    meta = {"Creator": "femodes"} if fmt in ("svg", "pdf") else {"Software": "femodes"}
    with replacing(path, "figure") as tmp:  # written whole, then moved into place
        fig.savefig(tmp, format=fmt, metadata=meta, **kw)
    return path


def _ghz(f):
    return f / 1e9
