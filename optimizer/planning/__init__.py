"""Planning layer: planner inputs, batch loads, the MILP, its solve and results.

Reads the dwell table only, never the thermal solvers.
"""
