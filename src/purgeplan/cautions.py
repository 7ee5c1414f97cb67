"""The cautions, stated once: the CLI help, the end of a study and the workbook show this text.

Purge gas is flammable and often toxic, and recycle loops run at high
pressure; the tool's figures are estimates for feasibility studies.
"""

from __future__ import annotations

#: The cautions, one sentence each (the workbook writes one sentence a line).
CAUTIONS: tuple[str, ...] = (
    "Purge gas is flammable and often toxic (hydrogen, ammonia, carbon monoxide).",
    "Synthesis and other recycle loops run at high pressure.",
    "The figures purgeplan gives are feasibility-grade estimates, not a design basis.",
    "Equipment design, relief and flare systems follow local codes and licensed "
    "engineering practice.",
)

#: The cautions as one paragraph, for the terminal.
CAUTION: str = "CAUTION: " + " ".join(CAUTIONS)
