"""Numbers and tables for the page: readable text beside the exact value.

A number is shown with a few significant digits (``17.639``) and kept exact in the cell's
``data-value`` (``17.638940012``, the shortest text that reads back to the same double), so a
reader sees a tidy table and a check can compare the page with the result bit for bit.
"""

from __future__ import annotations

import math

from .model import Cell, Table

__all__ = ["number_text", "cell", "text_cell", "table_from_frame", "time_unit", "MISSING"]

MISSING = "\u2013"     # an en dash for "no value"


def number_text(value, digits: int = 5) -> str:
    """``value`` with ``digits`` significant digits, without exponent from 1e-4 to 1e7.

    >>> number_text(17.63894), number_text(0.0300000001), number_text(1783045.43), number_text(1.7e-13)
    ('17.639', '0.03', '1783045', '1.7e-13')
    >>> number_text(float("nan")), number_text(float("inf")), number_text(-0.0)
    ('–', '∞', '0')
    """
    x = float(value)
    if math.isnan(x):
        return MISSING
    if math.isinf(x):
        return "\u221e" if x > 0 else "\u2212\u221e"
    if x == 0:
        return "0"
    exponent = math.floor(math.log10(abs(x)))
    if -4 <= exponent < 7:
        decimals = max(0, digits - 1 - exponent)
        text = f"{x:.{decimals}f}"
        if "." in text:
            text = text.rstrip("0").rstrip(".")
        return "0" if text in ("-0", "") else text
    mantissa, _, exp = f"{x:.{digits - 1}e}".partition("e")
    if "." in mantissa:
        mantissa = mantissa.rstrip("0").rstrip(".")
    return f"{mantissa}e{int(exp)}"


def cell(value, digits: int = 5, missing: str = MISSING) -> Cell:
    """A numeric cell (``missing`` shown for NaN, with no value kept)."""
    x = float(value)
    if math.isnan(x):
        return Cell(missing, None)
    return Cell(number_text(x, digits), repr(x))


def text_cell(value) -> Cell:
    return Cell("" if value is None else str(value), None)


def table_from_frame(frame, caption: str, *, id: str = "", note: str = "", digits=None,
                     scale=None, rename=None, missing=None, index: str | None = None) -> Table:
    """A :class:`Table` from a DataFrame: numbers become numeric cells, the rest text.

    ``digits`` {column: significant digits}; ``scale`` {column: factor} multiplies a column
    (for a change of unit, named by ``rename`` {column: new header}); ``missing`` {column: text
    for NaN}; ``index`` names the index as a first column.
    """
    digits, scale, rename, missing = digits or {}, scale or {}, rename or {}, missing or {}
    frame = frame.reset_index() if index is not None else frame
    if index is not None:
        frame = frame.rename(columns={frame.columns[0]: index})
    columns = [str(c) for c in frame.columns]
    rows = []
    for values in frame.itertuples(index=False, name=None):
        row = []
        for col, v in zip(columns, values):
            if isinstance(v, bool) or v is None or isinstance(v, str):
                row.append(text_cell(v))
                continue
            try:
                x = float(v)
            except (TypeError, ValueError):
                row.append(text_cell(v))
                continue
            row.append(cell(x * scale.get(col, 1.0), digits.get(col, 5),
                            missing.get(col, MISSING)))
        rows.append(row)
    return Table(caption, [rename.get(c, c) for c in columns], rows, id, note)


def time_unit(seconds) -> tuple[str, float]:
    """The unit a reader expects for spans up to ``seconds``: (name, seconds per unit).

    >>> time_unit(90.0), time_unit(5000.0), time_unit(3 * 86400.0), time_unit(30 * 86400.0)
    (('s', 1.0), ('min', 60.0), ('h', 3600.0), ('d', 86400.0))
    """
    s = abs(float(seconds)) if seconds is not None and math.isfinite(seconds) else 0.0
    if s < 120:
        return "s", 1.0
    if s < 7200:
        return "min", 60.0
    if s < 4 * 86400:
        return "h", 3600.0
    return "d", 86400.0
