"""Codes of the notes the IFC reader makes (family ``SR``, source reading): how it read the file."""

from __future__ import annotations

#: the model was read as a plane or a space truss, and why
NOTE_PLANE = "SR201"
#: members meant to carry bending (rigid connections) are audited as pin-jointed bars
NOTE_PIN_JOINTED = "SR202"
#: entities of the file that a pin-jointed truss model has no place for, not read
NOTE_IGNORED = "SR203"
#: how units were read (a unit converted, a unit not assigned)
NOTE_UNITS = "SR204"
#: which items make up the model (nothing assigned to the analysis model, combinations flattened, ...)
NOTE_ASSIGNMENT = "SR205"

__all__ = ["NOTE_ASSIGNMENT", "NOTE_IGNORED", "NOTE_PIN_JOINTED", "NOTE_PLANE", "NOTE_UNITS"]
