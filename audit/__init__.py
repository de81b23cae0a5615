"""truss-audit: independent verification of truss structural analyses."""
__version__ = "0.1.0"
