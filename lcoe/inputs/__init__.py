"""Inputs: the scenario schema, dotted keys and their bounds, TOML reading and writing, messages.

The lowest layer: it imports nothing else of the package.
"""
