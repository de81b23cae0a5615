"""IFC structural analysis models (ISO 16739: IFC4, and IFC2X3 where the same entities exist), read with ifcopenshell.

:func:`read_ifc` reads the analysis model (``IfcStructuralAnalysisModel``; ``model_name`` picks one
when the file holds several) into the neutral model, one module per part:

* :mod:`~audit.ifc.units`: ``IfcUnitAssignment`` -> exact factors; the model keeps the file's length
  and force units when the format has them;
* :mod:`~audit.ifc.geometry`: joints from the vertex geometry of ``IfcStructuralPointConnection``;
* :mod:`~audit.ifc.members`: ``IfcStructuralCurveMember`` s, E/alpha (``Pset_MaterialMechanical``) and
  A (``Pset_ProfileMechanical.CrossSectionArea``) through the material profile set;
* :mod:`~audit.ifc.supports`: ``IfcBoundaryNodeCondition`` -> restraints, springs, inclined ones;
* :mod:`~audit.ifc.loads`: load cases, point actions, combinations with their factors;
* :mod:`~audit.ifc.results`: reactions, displacements and axial forces of the result groups;
* :mod:`~audit.ifc.plane`: plane or space truss;
* :mod:`~audit.ifc.tree`: the neutral JSON tree, run through the format's own meaning stage;
* :mod:`~audit.ifc.places`: entity labels (``#1234 IfcStructuralCurveMember 'D3'``) for every message.

Every problem names its entity; all are raised together as one :class:`~audit.errors.InputError`.
The reader's interpretation remarks (plane or space, pin-jointed reading, entities not read, unit
choices) are the :class:`~audit.sources.SourceNote` s of the returned :class:`~audit.sources.SourceRead`.
"""

from __future__ import annotations

from .reader import read_ifc

__all__ = ["read_ifc"]
