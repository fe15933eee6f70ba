"""Dwell layer: scenario -> thermal converters, the dwell table and its cache.

With a future probes layer, the only part of :mod:`optimizer` that imports :mod:`thermal`.
"""
