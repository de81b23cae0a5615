"""Codes of the notes the IFC reader makes: the source-reading family ``SR`` (``audit/checks/source_notes.py``).

The codes are shared with the tables reader; each note says which part of the IFC file it is about.
"""

from __future__ import annotations

#: entities of the file that a pin-jointed truss model has no place for, not read (SR001: not read)
NOTE_IGNORED = "SR001"
#: how the file was read: plane or space truss, units, which items make up the model (SR002: how read)
NOTE_PLANE = "SR002"
NOTE_UNITS = "SR002"
NOTE_ASSIGNMENT = "SR002"
#: members meant to carry bending, rotational conditions, moments: audited as a pin-jointed truss (SR101)
NOTE_PIN_JOINTED = "SR101"
#: a unit conversion whose factor has no exact decimal form (SR102)
NOTE_INEXACT = "SR102"

__all__ = ["NOTE_ASSIGNMENT", "NOTE_IGNORED", "NOTE_INEXACT", "NOTE_PIN_JOINTED", "NOTE_PLANE", "NOTE_UNITS"]
