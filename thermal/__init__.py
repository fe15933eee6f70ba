"""Physics layer of corepace: transient conduction, air, foods, processes.

Pure functions and typed results in SI units (temperatures in °C). This
package never imports :mod:`optimizer`.
"""
