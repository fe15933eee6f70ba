"""Probes layer: data-logger files from trial and production runs.

Reads logger CSV files (:mod:`optimizer.probes.logs`), simulates the logged
probe positions with the physics (:mod:`optimizer.probes.model`), fits the
surface heat-transfer coefficient of a run with its uncertainty
(:mod:`optimizer.probes.calibrate`), writes the fit as a scenario overlay
(:mod:`optimizer.probes.overlay`) and checks a run against its rule
(:mod:`optimizer.probes.verify`).

Sits beside the planning layer: it imports the scenario and dwell layers and
:mod:`thermal`, never planning, studies, reporting or the command line.
"""
