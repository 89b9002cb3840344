"""Finance: costs, tax and depreciation, debt, the yearly cash flow, metrics and the compiled kernels.

Imports only :mod:`lcoe.inputs` and :mod:`lcoe.physics`.
"""
