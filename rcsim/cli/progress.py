"""The progress bar of long commands, drawn by tqdm.

It appears only once a job has lasted more than :data:`DELAY` seconds (a short run prints
nothing), on stderr, and shows the time left; it is off when stderr is not a terminal or the
command was asked to be quiet. The library's side is unchanged: a run calls ``progress(fraction)``
with the fraction done, a sweep ``progress(done, total)`` with runs; :class:`Progress` is
both, and is used as a context manager so the bar is closed however the job ends.
"""

from __future__ import annotations

import sys

__all__ = ["Progress", "DELAY"]

#: seconds a job runs before its bar appears
DELAY = 2.0
#: steps of a fraction-driven bar (a run): 0.1 % each
_STEPS = 1000
_FORMATS = {
    "fraction": "{desc} {bar:30} {percentage:5.1f}%  {remaining} left ",
    "runs": "{desc} {bar:30} {n}/{total} runs, {remaining} left ",
}


class Progress:
    """A progress bar for one job, labelled ``label``; does nothing at all when not ``enabled``.

    Call it with the fraction done (``0..1``, a run), or use :meth:`runs` with the runs done and
    planned (a sweep).
    """

    def __init__(self, enabled: bool, label: str = "running"):
        self.enabled = enabled
        self.label = label
        self._bar = None

    def _open(self, kind: str, total: int):
        if self._bar is None:
            from tqdm import tqdm  # only when a bar may be drawn: not for --help, not in a pipe

            class _Bar(tqdm):
                monitor_interval = 0   # no monitor thread (sweeps fork worker processes)

            self._bar = _Bar(total=total, desc=self.label, bar_format=_FORMATS[kind],
                             file=sys.stderr, delay=DELAY, mininterval=0.2, miniters=1,
                             dynamic_ncols=False, leave=True)
        return self._bar

    def __call__(self, fraction: float) -> None:
        """The job is ``fraction`` (0..1) done."""
        if self.enabled:
            self._advance("fraction", _STEPS, round(_STEPS * min(max(fraction, 0.0), 1.0)))

    def runs(self, done: int, total: int) -> None:
        """``done`` of ``total`` runs are finished."""
        if self.enabled:
            self._advance("runs", max(int(total), 1), int(done))

    def _advance(self, kind: str, total: int, done: int) -> None:
        bar = self._open(kind, total)
        if bar.total != total:
            bar.total = total
        if done > bar.n:
            bar.update(done - bar.n)

    def close(self) -> None:
        """End the bar's line, if it was drawn."""
        if self._bar is not None:
            self._bar.close()
            self._bar = None

    def __enter__(self) -> Progress:
        return self

    def __exit__(self, *exc) -> None:
        self.close()
