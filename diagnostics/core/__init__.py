"""The pure computation core: no Django, no settings, no clock, no I/O beyond a table cache.

Everything here takes numbers (or numpy arrays) and returns numbers or frozen dataclasses,
so it can be tested without a database and reused by any layer above it.
"""
