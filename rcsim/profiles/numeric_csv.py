"""Reading a CSV file's numbers directly, with the text pass kept for errors.

The readers of CSV files (:func:`rcsim.profiles.timeseries.read_time_series`, the fit log, the
weather record) name the file line and column of any cell they cannot use, and so once read
every cell as text first: about 9 times a file's size in memory and 13 s for six million rows
(tests/benchmarks/bench_csv.py). This module
parses the numbers at once with pandas' C float reader, streaming the file through the same
byte cap as :func:`rcsim.inputfiles.read_bytes` (the file's bytes are never held whole), and
says when its result is *the same* as the text pass would give; a caller uses it only then, and
otherwise runs the text pass, which finds and names the problem as before.

"The same" rests on these facts (each tested in tests/test_numeric_csv.py):

* The fields are split by the same tokenizer with the same options (``skipinitialspace``,
  UTF-8, blank lines skipped), so the header, the number of rows and the cells are those the
  text pass sees; a file whose first data row has more fields than the header (pandas then takes
  the first column as an index) is left to the text pass.
* A cell the C float reader accepts gives the value ``pd.to_numeric`` gives for the stripped
  text (both are correctly rounded; compared on random and hand-picked cells), with two
  exceptions that send the file to the text pass: the words ``true`` and ``false`` in any case,
  which the float reader takes as 1 and 0 (in a column of such words), and a negative zero in a
  column of whole numbers, whose sign ``pd.to_numeric`` drops when every cell is written as an
  integer (``-0``; it keeps it beside ``1.5``, and so does the float reader).
* An empty cell is NaN in both (the text pass: ``pd.to_numeric("")``); any other text the float
  reader refuses (``NA``, ``1,5`` quoted, a non-breaking space) ends the fast parse.
"""

from __future__ import annotations

import io

import numpy as np

from ..inputfiles import check_regular_file

__all__ = ["NumericCSV", "PARSE_OPTIONS", "ENABLED"]

#: False reads every CSV by the text pass alone, as before this module (for the benchmark,
#: tests/benchmarks/bench_csv.py, and tests comparing the two passes)
ENABLED = True

#: the options both passes give pandas.read_csv (the text pass adds dtype=str)
PARSE_OPTIONS = dict(skipinitialspace=True, keep_default_na=False, encoding="utf-8")

#: words pandas' float reader turns into 1.0 and 0.0 (in any case), which the text pass refuses
_BOOLEAN_WORDS = (b"true", b"false")
_BOOLEAN_LETTERS = (b"u", b"U", b"s", b"S")


class _NotSame(Exception):
    """The fast parse cannot vouch for its result: the caller runs the text pass."""


class _CappedStream(io.RawIOBase):
    """A file read through a byte cap that also notes whether a boolean word appears after the
    header line (checked with an overlap, so a word split between two reads is found)."""

    def __init__(self, fh, limit: int | None):
        super().__init__()
        self._fh, self._limit = fh, limit
        self.got = 0
        self.boolean_word = False
        self._tail = b""
        self._in_header = True

    def readable(self) -> bool:
        return True

    def readinto(self, buffer) -> int:
        n = self._fh.readinto(buffer)
        if not n:
            return n
        self.got += n
        if self._limit is not None and self.got > self._limit:
            raise _NotSame("more than the cap")   # the text pass says so, as before
        if not self.boolean_word:
            chunk = bytes(memoryview(buffer)[:n])
            if self._in_header:
                end = chunk.find(b"\n")
                if end < 0:
                    return n
                chunk, self._in_header = chunk[end + 1:], False
            chunk = self._tail + chunk
            # 'u' or 's' (in any case) is in both words and in no number: a quick look first
            if any(letter in chunk for letter in _BOOLEAN_LETTERS):
                lower = chunk.lower()
                self.boolean_word = any(word in lower for word in _BOOLEAN_WORDS)
            self._tail = chunk[-(max(map(len, _BOOLEAN_WORDS)) - 1):]
        return n


class NumericCSV:
    """A CSV file about to be parsed for numbers: its header and first data row, read first.

    :meth:`open` gives None where the text pass must run anyway (not a regular file, larger
    than the cap, no data row, not UTF-8); :meth:`parse` gives the parsed frame, or None where
    its result might differ from the text pass's.

    >>> import os, tempfile
    >>> path = os.path.join(tempfile.mkdtemp(), "a.csv")
    >>> with open(path, "w") as fh:
    ...     _ = fh.write("time [h], T\\n0, 20.5\\n1, 21\\n")
    >>> csv = NumericCSV.open(path, 1000)
    >>> csv.names, csv.first_row
    (['time [h]', 'T'], ['0', '20.5'])
    >>> csv.parse().to_numpy().tolist()
    [[0.0, 20.5], [1.0, 21.0]]
    """

    def __init__(self, path, limit, raw_names, names, first_row):
        self.path, self.limit = path, limit
        self._raw_names = raw_names     # as pandas names them (mangled duplicates, unstripped)
        self.names = names              # stripped, as the text pass names them
        self.first_row = first_row      # the first data row's cells, stripped

    @classmethod
    def open(cls, path, limit: int | None) -> "NumericCSV | None":
        """The header and first data row of the CSV file ``path`` (at most ``limit`` bytes), or
        None when the text pass is needed to read or refuse it."""
        import pandas as pd

        if not ENABLED:
            return None
        try:
            size = check_regular_file(path, "").st_size
        except Exception:  # noqa: BLE001 - the text pass names the problem
            return None
        if limit is not None and size > limit:     # the text pass refuses it, as before
            return None
        try:
            with open(path, "rb") as fh:
                head = pd.read_csv(io.BufferedReader(_CappedStream(fh, limit)), nrows=1, dtype=str,
                                   **PARSE_OPTIONS)
        except Exception:  # noqa: BLE001 - any failure: the text pass says what it is
            return None
        raw_names = list(head.columns)
        names = [str(c).strip() for c in raw_names]
        if head.shape[0] != 1 or not isinstance(head.index, pd.RangeIndex) or \
                any(not isinstance(c, str) for c in raw_names):
            return None
        first = ["" if isinstance(v, float) else str(v).strip() for v in head.iloc[0]]
        return cls(path, limit, raw_names, names, first)

    def parse(self, text_columns=()):
        """The whole file as a DataFrame (stripped column names): float64 columns, except those
        named in ``text_columns`` (strings as the text pass reads them); None when the
        result might differ from the text pass's (see the module text)."""
        import pandas as pd

        text_columns = set(text_columns)
        dtype = {raw: (str if name in text_columns else np.float64)
                 for raw, name in zip(self._raw_names, self.names)}
        try:
            with open(self.path, "rb") as fh:
                stream = _CappedStream(fh, self.limit)
                frame = pd.read_csv(io.BufferedReader(stream, 1 << 20), dtype=dtype,
                                    na_values=[""], **PARSE_OPTIONS)
        except Exception:  # noqa: BLE001 - a cell the float reader refuses, a ragged row, ...
            return None
        if stream.boolean_word or list(frame.columns) != self._raw_names or frame.shape[0] == 0 \
                or not isinstance(frame.index, pd.RangeIndex):
            return None
        frame.columns = self.names
        for name in self.names:
            if name in text_columns:
                continue
            values = frame[name].to_numpy()
            if np.signbit(values[values == 0]).any() and (values == np.round(values)).all():
                return None     # '-0' in a column of integers: the text pass drops its sign
        return frame
