"""The cautions that travel with results: one line on every saved figure, an attribute of every
result file, a line under every command's output.

Results are pasted into reports and passed on without the program that made them; the caution
goes with them.
"""

from __future__ import annotations

__all__ = ["CAUTION", "FIGURE_CAUTION", "MATERIALS_CAUTION"]

#: The caution of every result (a root attribute ``caution`` of result files; printed by the
#: commands).
CAUTION = ("caution: a simulation supports, and never replaces, qualification testing, local "
           "codes and licensed professional judgement.")

#: The short line at the foot of every saved figure.
FIGURE_CAUTION = ("Model result (rcsim): supports, never replaces, qualification testing and "
                  "professional judgement.")

#: What the material table is and is not.
MATERIALS_CAUTION = ("caution: these are typical values for a first model, not design values: "
                     "use the declared or design values of the actual product (its data sheet, "
                     "the applicable standard or code) for a design.")
