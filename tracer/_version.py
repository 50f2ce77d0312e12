"""The version of tracer, in one place (read by pyproject.toml and the result JSON)."""

__version__ = "0.1.0"
