"""Pure numerics of the occupancy model: exact and asymptotic collision risk.

Rule of this package: it imports only the standard library, ``mpmath`` and
``gmpy2``. No Flask, no marshmallow, no I/O, no module-level mutable state.
Every precision is passed explicitly; the global mpmath context is never used.
"""
