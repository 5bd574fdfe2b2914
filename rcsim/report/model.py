"""The report model: what a report says, independent of how it is shown.

A :class:`Report` is a title, a purpose, the caution, a few headline facts, sections of blocks
(tables, figures, paragraphs, facts, preformatted text), warnings and provenance. The builders
(:mod:`.run`, :mod:`.fit`, :mod:`.sweep`, :mod:`.sizing`) fill one from a result;
:mod:`.render` turns it into one self-contained HTML page through the package's Jinja2
templates. Every text here is plain text (escaped when rendered); only :attr:`Figure.svg`, made
by :mod:`.figures` from our own drawings and cleaned there, is inserted as markup.
"""

from __future__ import annotations

from dataclasses import dataclass, field

__all__ = ["Cell", "Table", "Figure", "Gallery", "Paragraph", "Facts", "Preformatted", "Section",
           "Report", "CAUTION"]

#: The caution every report carries, visible near its top.
CAUTION = ("A simulation supports, and never replaces, qualification testing, local codes and "
           "licensed professional judgement. It is only as good as its inputs: check every input "
           "below, and check the model against measurements before relying on it.")


@dataclass
class Cell:
    """A table cell: the text shown and, for a number, its exact value (shortest repr)."""

    text: str
    value: str | None = None

    @property
    def numeric(self) -> bool:
        return self.value is not None


@dataclass
class Table:
    caption: str
    columns: list[str]
    rows: list[list[Cell]]
    id: str = ""
    note: str = ""
    block: str = "table"


@dataclass
class Figure:
    caption: str
    svg: str                 # cleaned inline SVG made by rcsim (see figures.inline_svg)
    id: str = ""
    small: bool = False
    block: str = "figure"


@dataclass
class Gallery:
    """Small figures side by side (the profiles of the inputs)."""

    figures: list[Figure]
    caption: str = ""
    block: str = "gallery"


@dataclass
class Paragraph:
    text: str
    block: str = "paragraph"


@dataclass
class Facts:
    """Label: value pairs (a definition list)."""

    items: list[tuple[str, str]]
    block: str = "facts"


@dataclass
class Preformatted:
    text: str
    caption: str = ""
    id: str = ""
    block: str = "pre"


@dataclass
class Section:
    id: str
    title: str
    blocks: list = field(default_factory=list)
    intro: str = ""


@dataclass
class Report:
    kind: str                 # "run", "fit", "sweep", "sizing"
    title: str
    subtitle: str
    purpose: str
    headline: list[tuple[str, str]]
    sections: list[Section]
    warnings: list[str]
    provenance: list[tuple[str, str]]
    scenario_text: str = ""
    caution: str = CAUTION
    extra_caution: str = ""
    generated: str = ""
    language: str = "en"

    def section(self, section_id: str) -> Section:
        for s in self.sections:
            if s.id == section_id:
                return s
        raise KeyError(section_id)
