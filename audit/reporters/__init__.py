"""Reporters: each turns an AuditResult into text.  They only format."""
