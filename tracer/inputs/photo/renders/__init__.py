"""Synthetic photos of invented members whose truth is known: for tests, the bundled samples and benchmarks.

Nothing in the photo path imports these; they import from it (the tone curve, the lens model).
"""
