"""Writing figures: PNG (re-saved with a 256-colour palette), SVG or PDF, without dates or
software names in the file (the same figure gives the same bytes), under a temporary name that is
renamed when complete. Every saved figure carries a one-line caution
(:data:`rcsim.caution.FIGURE_CAUTION`): figures get pasted into reports without the text around
them."""

from __future__ import annotations

import contextlib
import os
import warnings

from ..errors import InputError
from .style import DPI, fallback_fonts, styled, warn_missing_glyphs

__all__ = ["FORMATS", "save_figure", "write_figure", "add_caution"]

FORMATS = ("png", "svg", "pdf")


def save_figure(fig, path) -> str:
    """Write ``fig`` to ``path`` (.png, .svg or .pdf) under a temporary name, then rename."""
    path = os.fspath(path)
    fmt = os.path.splitext(path)[1].lower().lstrip(".")
    if fmt not in FORMATS:
        raise InputError(f"cannot write a figure as {fmt or 'a file without suffix'!r}", path,
                         "use .png, .svg or .pdf")
    from ..atomic import atomic_path

    with _fonts_for(fig):             # the caution's layout measures the texts too
        undo = add_caution(fig)
        try:
            with atomic_path(path, f".{fmt}.tmp") as tmp:
                write_figure(fig, tmp, fmt, **({} if undo.reserved else {"bbox_inches": "tight",
                                                                         "pad_inches": 0.06}))
                if fmt == "png":
                    _palette_png(tmp)
        finally:
            undo()   # the caller's figure is left as it was
    return path


#: what each format's file leaves out: no date, no software name (the same figure, the same bytes)
_NO_STAMP = {"png": {"Software": None}, "svg": {"Date": None}, "pdf": {"CreationDate": None}}


def write_figure(fig, target, fmt: str, *, rc: dict | None = None, **savefig) -> None:
    """Write ``fig`` to ``target`` (a path or a file object) as ``fmt`` in rcsim's look: the one
    place every figure rcsim writes goes through (saved figures, the network picture, the
    report's inline SVG).

    The settings of :func:`~rcsim.plotting.style.styled` (with ``rc`` on top) are in force, every
    text falls back to the fonts that have the glyphs its own font lacks (also text made outside
    ``styled``), characters no installed font has are named once in one warning (instead of
    matplotlib's warning per glyph), and the file carries no date or software name. ``savefig``
    goes to ``Figure.savefig`` (``dpi`` defaults to :data:`~rcsim.plotting.style.DPI`).
    """
    savefig = {"dpi": DPI, "metadata": _NO_STAMP.get(fmt), **savefig}
    with _fonts_for(fig), styled(rc):
        fig.savefig(target, format=fmt, **savefig)


@contextlib.contextmanager
def _fonts_for(fig):
    """While the block runs, every text of ``fig`` falls back along the font list, and
    characters no font has are named in one warning (once per process) instead of matplotlib's
    warning per glyph."""
    missing = warn_missing_glyphs(fig)       # once, in one line, naming a font to install
    with fallback_fonts(fig), warnings.catch_warnings():
        if missing:
            warnings.filterwarnings("ignore", r"Glyph \d+ .*missing from font", UserWarning)
        yield


class _Footer:
    """The caution's text and how to take it away again (``reserved``: whether the layout
    engine keeps room for it; otherwise it lies below the drawing and the save takes it in)."""

    def __init__(self, text, engine=None, rect=None):
        self.text, self.engine, self.rect = text, engine, rect
        self.reserved = engine is not None

    def __call__(self) -> None:
        self.text.remove()
        if self.engine is not None:
            self.engine.set(rect=self.rect)


def add_caution(fig) -> _Footer:
    """Write the caution line on the figure, right-aligned, small and dark grey.

    With a constrained layout the layout keeps a strip for it along the top, above the titles
    (legends under the axes take the foot), or along the foot when the figure has a title of its
    own at the top; otherwise it goes just below the drawing. Returns a
    callable that removes it again.
    """
    from matplotlib.layout_engine import ConstrainedLayoutEngine

    from ..caution import FIGURE_CAUTION

    strip = 0.2 / fig.get_figheight()        # 0.2 inch
    engine = fig.get_layout_engine()
    style = {"ha": "right", "fontsize": 7, "color": "#333333", "gid": "rcsim-caution"}
    if isinstance(engine, ConstrainedLayoutEngine):
        rect = engine.get().get("rect", (0, 0, 1, 1))
        x0, y0, w, h = rect
        if fig.get_suptitle():   # the title takes the top: a strip along the foot
            engine.set(rect=(x0, y0 + strip, w, h - strip))
            text = fig.text(x0 + w - 0.005, y0 + 0.25 * strip, FIGURE_CAUTION, va="bottom",
                            **style)
        else:                    # a strip along the top (legends under the axes take the foot)
            engine.set(rect=(x0, y0, w, h - strip))
            text = fig.text(x0 + w - 0.005, y0 + h - 0.2 * strip, FIGURE_CAUTION, va="top",
                            **style)
        return _Footer(text, engine, rect)
    fig.draw_without_rendering()
    box = fig.get_tightbbox(fig.canvas.get_renderer())   # inches, everything drawn
    bottom = min(box.y0 / fig.get_figheight(), 0.0) - 0.04 / fig.get_figheight()
    return _Footer(fig.text(0.995, bottom, FIGURE_CAUTION, va="top", **style))


def _palette_png(path) -> None:
    """Re-save a PNG with a 256-colour palette: line figures look the same at a third the size."""
    from PIL import Image

    with Image.open(path) as im:
        small = im.convert("RGB").quantize(colors=256, method=Image.Quantize.MEDIANCUT, dither=0)
    small.save(path, format="PNG", optimize=True)
