"""Analysis over the engine: Monte Carlo, sensitivity (sweep, tornado, solve), lifetime study, the full study.

Imports the engine and the layers below it.
"""
