"""The lender workbook: the cash-flow model as an .xlsx of live spreadsheet formulas.

Inputs are values in one place (the Inputs sheet), each with its unit and its
scenario key; every yearly line of the energy, cash-flow and debt sheets and every
metric on the summary is a formula over them, laid out so that a spreadsheet
engine reproduces the engine's arithmetic (:mod:`lcoe.finance.cashflow`, :mod:`lcoe.finance.metrics`)
to rounding. What needs the engine stays an engine value, marked as such:

* the gross AEP (the Weibull integral over the site power curve) and the P-case
  energy factors (from the speed sensitivity and the uncertainty terms);
* the debt at close and the debt-service scale, which the engine converges through
  the interest-tax circularity. The sheet holds them as inputs, so it has no
  circular reference, and shows live checks of the sculpted schedule against them;
* the break-even PPA price (a goal seek that re-sizes the debt at each price);
* Monte Carlo and sensitivity results.

Every key of the report's ``metrics`` is a workbook-level defined name of the same
spelling pointing at its formula on the summary. Text from the scenario is always
written as text, never as a formula. The file is written atomically.
"""

from lcoe.outputs.workbook.book import build, write
from lcoe.outputs.workbook.cells import FIRST_ROW, T0_COL, YEAR_ROW

__all__ = ["build", "write", "FIRST_ROW", "T0_COL", "YEAR_ROW"]
