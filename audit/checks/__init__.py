"""Check families: one module each, every one a pure function of the audit context."""
