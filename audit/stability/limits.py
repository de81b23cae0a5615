"""Limits and tolerances of the stability analysis, named once.

The package re-exports them; :func:`audit.stability.analyse` reads ``DENSE_EIGEN_LIMIT`` and
``ZERO_EIGEN_RELATIVE`` from the package at call time (so a test may lower them on ``audit.stability``).
"""

from __future__ import annotations

#: models with at most this many degrees of freedom get an exact rank
EXACT_DOF_LIMIT = 3000
#: geometry-only eigenvalues below this fraction of ‖G‖∞ count as zero (numerical path)
ZERO_EIGEN_RELATIVE = 1.0e-12
#: a joint's direction Gram matrix eigenvalue below this (unit vectors) is a missing direction
LOCAL_RANK_TOLERANCE = 1.0e-10
#: up to this many suspect joints, whether a joint really lacks a direction is decided in exact arithmetic
EXACT_LOCAL_LIMIT = 5000
#: relative tolerance of the small dense rank decisions (rigid-body analysis, self-stress support)
SMALL_RANK_TOLERANCE = 1.0e-9
#: below this order the geometry-only matrix is decomposed densely
DENSE_EIGEN_LIMIT = 1200
#: the sparse numerical search finds at most this many zero modes (a count that reaches it is a lower bound)
ZERO_MODE_LIMIT = 512
#: ... and keeps at most this many entries (order × block columns) in one block of its subspace iteration
ZERO_MODE_ENTRIES = 10_000_000
#: at most this many shift-invert steps of the subspace iteration
SUBSPACE_STEPS = 60
#: at most this many mechanisms and states of self-stress are described one by one
DESCRIBE_LIMIT = 20
#: at most this many joints are listed in a mechanism's mode
MODE_JOINTS_LIMIT = 200
#: the first-order test runs for at most this many internal mechanisms (and 50 mechanisms in all)
ORDER_TEST_LIMIT = 12
#: the first-order test (it factorises the geometry-only matrix once more) runs up to this many dofs
ORDER_TEST_DOF_LIMIT = 200_000
#: exact self-stress basis up to this many columns of A; a dense float one up to DENSE_SELF_STRESS entries
EXACT_SELF_STRESS_COLUMNS = 400
DENSE_SELF_STRESS = 4_000_000
#: the prime of the modular rank test (2³¹ − 1: products of two residues fit in int64)
MODULUS = 2_147_483_647
#: the modular full-rank proof is attempted when d·j · bandwidth² is at most this (about 5 s)
EXACT_WORK_LIMIT = 2.0e8
#: above this many dofs a rank-deficient model is not given an exact null space (too slow): numerical instead
EXACT_UNSTABLE_LIMIT = 1500
