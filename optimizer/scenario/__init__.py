"""Scenario layer: the plant models, units, changes and the shipped rule data.

Imports nothing from :mod:`thermal` or any later layer of :mod:`optimizer`.
"""
