"""The deterministic core: pure, vectorised numpy/scipy functions.

Conventions (compression positive, MPa, m, rad, frames) are stated once in
:mod:`risk.conventions`. Nothing here reads files, prints, uses randomness or converts units.
"""
