"""Physics: wind climate, power curves, the AEP integral, gross-to-net yield and P-values.

Imports only :mod:`lcoe.inputs`.
"""
