"""The format's document names and version (``FORMAT.md``, version 1) and the ids of its two JSON Schemas."""

MODEL_FORMAT = "truss-audit-model"
RESULTS_FORMAT = "truss-audit-results"
FORMAT_VERSION = 1
_MODEL_ID = "urn:truss-audit:schema:model:1"
_RESULTS_ID = "urn:truss-audit:schema:results:1"
