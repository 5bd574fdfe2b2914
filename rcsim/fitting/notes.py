"""What a fit warns about: the warning class and the notes gathered while fitting."""

from __future__ import annotations

from dataclasses import dataclass, field

from ..errors import RcsimWarning

__all__ = ["FitWarning", "Notes", "labelled"]


class FitWarning(RcsimWarning):
    """A fit is doubtful: values not identifiable, correlated, residuals autocorrelated, gaps."""


@dataclass
class Notes:
    """Warning texts in the order found, each with its category (issued when the fit ends)."""

    texts: list = field(default_factory=list)
    categories: list = field(default_factory=list)

    def add(self, text: str, category: type = FitWarning) -> None:
        self.texts.append(text)
        self.categories.append(category)

    def extend(self, texts, category: type = FitWarning) -> None:
        for text in texts:
            self.add(text, category)

    def __contains__(self, text) -> bool:
        return text in self.texts


def labelled(label: str, text: str, name: str | None = None) -> str:
    """``text`` as a note about the log ``label`` of a fit of several logs, naming the log once.

    A text that already starts with ``label: `` is kept; one that starts with the reader's own
    name for the log (``name``: its file name, or ``<data>`` for a table) has it replaced by
    ``label``; any other text gets ``label: `` in front.
    """
    for prefix in (label, name):
        if prefix and text.startswith(f"{prefix}: "):
            return f"{label}: {text[len(prefix) + 2:]}"
    return f"{label}: {text}"
