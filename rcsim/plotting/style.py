"""The look of every figure: colours, line styles, sizes and the matplotlib settings.

Colours are our own set of six (:data:`PALETTE`), checked to stay apart under simulated protan,
deutan and tritan vision (``tests/test_plotting.py``); each series also gets its own line style
(:data:`LINE_STYLES`), so curves stay apart in grey-scale print. Boundaries are grey; limit bands
are pale tints of their node's colour.

Text is set in matplotlib's own sans-serif font, then in installed fonts that have the glyphs it
lacks (Chinese, Japanese and Korean, for names written in those scripts): :func:`font_families`,
the ``font.family`` list of :data:`STYLE` (matplotlib falls back along the list glyph by glyph).
Where no installed font has a character of a figure's text, :func:`warn_missing_glyphs` says
once which font package to install, instead of empty boxes drawn silently. Importing this module
imports no matplotlib; the fonts are looked up when :data:`STYLE` is first read.

Every figure rcsim draws (results, fits and candidates, sweeps, sizing, the network picture, the
report's small figures) is made inside :func:`styled` and written by
:func:`rcsim.plotting.save.write_figure`, which sets the same settings again and lets every text
fall back to the fonts of the list: those two are the one place the look is applied.
"""

from __future__ import annotations

import contextlib
import functools
import os
import unicodedata
import warnings

__all__ = ["PALETTE", "LINE_STYLES", "MARKERS", "BOUNDARY_COLOURS", "BOUNDARY_STYLES", "STYLE",
           "NODE_WIDTH", "BOUNDARY_WIDTH", "SIZE_ONE", "SIZE_TWO", "DPI", "MAX_SERIES",
           "series_style", "DEFAULT_FONT", "figure_style", "styled", "font_families",
           "fallback_fonts", "missing_glyphs", "warn_missing_glyphs"]

#: Line colours, in the order series take them: ink blue, amber, wine, sea green, umber, sky.
#: Dark and light alternate so that neighbours in the order also differ in grey-scale.
PALETTE = ("#1d3f8f", "#e3871a", "#8e1f4f", "#3aa394", "#6b4e16", "#8fbde6")
#: Line styles, in the same order as the colours (solid, dashed, dotted, dash-dot, ...).
LINE_STYLES = ("-", (0, (6, 2.2)), (0, (1.2, 1.8)), (0, (7, 2, 1.5, 2)), (0, (3, 1.5, 1, 1.5, 1, 1.5)),
               (0, (10, 3)))
#: Markers added from the seventh series on, when colours and styles start again.
MARKERS = ("o", "s", "^", "D", "v", "P")
#: Boundary lines: greys and their own dash patterns.
BOUNDARY_COLOURS = ("#6f6f6f", "#9c9c9c", "#4a4a4a")
BOUNDARY_STYLES = ((0, (5, 1.5, 1, 1.5)), (0, (2, 1.5)), (0, (8, 2)))

#: Line widths [pt] of nodes and of boundaries.
NODE_WIDTH = 1.9
BOUNDARY_WIDTH = 1.1
#: Figure sizes [in]: one axes, two stacked axes (a print column at 1:1, a screen at 150 dpi).
SIZE_ONE = (7.0, 4.3)
SIZE_TWO = (7.0, 6.4)
#: Resolution of PNG files [dots per inch].
DPI = 150
#: Most series a figure draws when none are named.
MAX_SERIES = 8

#: matplotlib's own sans-serif font (bundled with it), the first of :func:`font_families`.
DEFAULT_FONT = "DejaVu Sans"
#: One character of each script the fallback fonts are looked for by: a Han ideograph
#: (U+51B7), hiragana (U+3042), a Hangul syllable (U+D55C).
CJK_PROBES = ("\u51b7", "\u3042", "\ud55c")

#: matplotlib settings every figure is drawn and saved with (``matplotlib.rc_context(STYLE)``);
#: read as ``STYLE`` (or :func:`figure_style`), with ``font.family`` set to
#: :func:`font_families` on first use.
_STYLE = {
    "font.size": 9.5,
    "axes.titlesize": 10.5,
    "axes.labelsize": 10,
    "xtick.labelsize": 9,
    "ytick.labelsize": 9,
    "legend.fontsize": 8.5,
    "legend.framealpha": 0.92,
    "legend.edgecolor": "#bbbbbb",
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": "#e2e2e2",
    "grid.linewidth": 0.6,
    "axes.axisbelow": True,
    "axes.edgecolor": "#444444",
    "savefig.dpi": DPI,
    "pdf.fonttype": 42,
    "ps.fonttype": 42,
    "svg.hashsalt": "rcsim",
}


def series_style(i: int) -> dict:
    """Colour, line style and (from the seventh series) marker of series ``i``.

    >>> series_style(0)["color"] == PALETTE[0], "marker" in series_style(6)
    (True, True)
    """
    out = {"color": PALETTE[i % len(PALETTE)], "linestyle": LINE_STYLES[i % len(LINE_STYLES)]}
    if i >= len(PALETTE):
        out.update(marker=MARKERS[(i - len(PALETTE)) % len(MARKERS)], markevery=0.1,
                   markersize=4, markerfacecolor="white")
    return out


def __getattr__(name: str):
    """``STYLE``: the settings with the font list, looked up on first use (PEP 562)."""
    if name == "STYLE":
        return figure_style()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | {"STYLE"})


@functools.lru_cache(maxsize=1)
def figure_style() -> dict:
    """:data:`STYLE`: the settings, with ``font.family`` the list of :func:`font_families`
    (looked up on the first call, which imports matplotlib)."""
    return {**_STYLE, "font.family": list(font_families())}


@contextlib.contextmanager
def styled(extra: dict | None = None):
    """Draw in rcsim's look: ``matplotlib.rc_context`` of :data:`STYLE` (the font list
    included), with ``extra`` settings on top. Text made inside takes the font list, so names in
    any script find a font that has them. Also a decorator (``@styled()``) of a function that
    makes a figure."""
    import matplotlib as mpl

    with mpl.rc_context({**figure_style(), **(extra or {})}):
        yield


@functools.lru_cache(maxsize=1)
def font_families() -> tuple[str, ...]:
    """The font families figures are set in: :data:`DEFAULT_FONT`, then the first installed
    font (regular sans-serif faces first) for each of :data:`CJK_PROBES` it lacks.

    Fonts are those matplotlib's font manager lists, outside matplotlib's own folder (its bundled
    fonts have none of these glyphs); where it has none, the system's font files it has not
    listed yet (a font installed after matplotlib built its font cache) are added to it.
    """
    import matplotlib as mpl
    from matplotlib import font_manager

    manager = font_manager.fontManager
    bundled = os.path.realpath(mpl.get_data_path()) + os.sep
    families = [DEFAULT_FONT]
    lacking = [c for c in CJK_PROBES if not _has_glyph(_font_file(DEFAULT_FONT), c)]
    listed = [e for e in manager.ttflist if not os.path.realpath(e.fname).startswith(bundled)]
    lacking = _add_covering(listed, lacking, families)
    if lacking:
        known = {os.path.realpath(e.fname) for e in manager.ttflist}
        for path in sorted(font_manager.findSystemFonts()):
            if os.path.realpath(path) not in known and any(_has_glyph(path, c) for c in lacking):
                manager.addfont(path)
        fresh = [e for e in manager.ttflist if os.path.realpath(e.fname) not in known]
        _add_covering(fresh, lacking, families)
    return tuple(families)


def _add_covering(entries, lacking: list[str], families: list[str]) -> list[str]:
    """Append to ``families`` the first of ``entries`` that has each character of ``lacking``;
    return the characters still lacking."""
    def preference(e):
        return ("Sans" not in e.name or "Mono" in e.name, e.style != "normal",
                e.weight not in (400, "normal", "regular"), e.name)

    for entry in sorted(entries, key=preference):
        if not lacking:
            break
        if entry.name in families:
            continue
        covered = [c for c in lacking if _has_glyph(entry.fname, c)]
        if covered:
            families.append(entry.name)
            lacking = [c for c in lacking if c not in covered]
    return lacking


@functools.lru_cache(maxsize=None)
def _font_file(family: str) -> str | None:
    """The file matplotlib draws ``family`` from (None if it finds none)."""
    from matplotlib import font_manager

    try:
        return font_manager.findfont(font_manager.FontProperties(family=family),
                                     fallback_to_default=False)
    except ValueError:
        return None


@functools.lru_cache(maxsize=None)
def _charmap(path: str) -> frozenset:
    """The code points the font file ``path`` has glyphs for (empty if it cannot be read)."""
    from matplotlib.ft2font import FT2Font

    try:
        return frozenset(FT2Font(path).get_charmap())
    except (OSError, RuntimeError, ValueError):
        return frozenset()


def _has_glyph(path: str | None, char: str) -> bool:
    return path is not None and ord(char) in _charmap(path)


def missing_glyphs(text: str, families=None) -> list[str]:
    """The characters of ``text`` (printing ones, in order, each once) that none of
    ``families`` (default :func:`font_families`) has a glyph for."""
    files = [_font_file(f) for f in (font_families() if families is None else families)]
    out = []
    for char in dict.fromkeys(text):
        if unicodedata.category(char)[0] in "CZ" or char in out:
            continue            # controls, format characters and spaces are never drawn
        if not any(_has_glyph(path, char) for path in files):
            out.append(char)
    return out


@contextlib.contextmanager
def fallback_fonts(fig):
    """While the block runs (a save), every text on ``fig`` falls back to the fonts of
    :func:`font_families` after its own, also text made outside ``rc_context(STYLE)``; the
    texts are left as they were afterwards."""
    from matplotlib.text import Text

    extra = font_families()[1:]
    changed = []
    if extra:
        for text in fig.findobj(Text):
            own = list(text.get_fontproperties().get_family())
            if any(family not in own for family in extra):
                changed.append((text, own))
                text.set_fontfamily(own + [f for f in extra if f not in own])
    try:
        yield
    finally:
        for text, own in changed:
            text.set_fontfamily(own)


#: whether :func:`warn_missing_glyphs` has warned in this process
_WARNED: list[bool] = [False]


def warn_missing_glyphs(fig) -> list[str]:
    """Warn, once per process, when text on ``fig`` has characters no installed font can draw
    (matplotlib would draw empty boxes), naming the font package that has them; returns those
    characters."""
    from matplotlib.text import Text

    text = "".join(t.get_text() for t in fig.findobj(Text))
    missing = missing_glyphs(text)
    if missing and not _WARNED[0]:
        _WARNED[0] = True
        from ..errors import RcsimWarning

        shown = ", ".join(f"{c!r} (U+{ord(c):04X})" for c in missing[:3])
        cjk = any(unicodedata.name(c, "").startswith(("CJK", "HIRAGANA", "KATAKANA", "HANGUL"))
                  for c in missing)
        package = ("fonts-noto-cjk, for Chinese, Japanese and Korean" if cjk
                   else "fonts-noto-core, for most other scripts")
        warnings.warn(f"figure text has characters no installed font can draw ({shown}"
                      f"{' and more' if len(missing) > 3 else ''}): they show as empty boxes; "
                      f"install a font that has them (on Debian: {package})", RcsimWarning,
                      stacklevel=2)
    return missing
