"""The ``tracer`` command line: parsing and printing only; the work is done by the packages below."""

from .main import main

__all__ = ["main"]
