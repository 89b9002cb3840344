"""Outputs: the JSON report and text tables, CSV, atomic files, the lender workbook.

They show what the engine and the analysis layer return and compute no figure of their own.
"""
