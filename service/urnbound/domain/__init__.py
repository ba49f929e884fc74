"""Identifier spaces, alphabets, input parsing and the questions users ask.

Rule of this package: it builds on ``urnbound.core`` and the standard library
only. No Flask, no marshmallow, no I/O, no module-level mutable state; the
HTTP layer loads requests into these objects and dumps the reports they return.
"""
