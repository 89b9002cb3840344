"""The lender workbook: the cash-flow model as an .xlsx of live spreadsheet formulas.

Inputs are values in one place (the Inputs sheet), each with its unit, its scenario key and
its value as exported; every yearly line of the energy, cash-flow, debt and lender-case sheets
and every metric on the summary is a formula over them, laid out so that a spreadsheet engine
reproduces the engine's arithmetic (:mod:`lcoe.finance.cashflow`, :mod:`lcoe.finance.metrics`)
to rounding. The yearly sheets run to a horizon (the longest life among the scenario and its
variants, at least 40 years) and the life is live through an operating mask.

The debt has two modes, one input cell: ``locked`` holds the debt, fee, yearly debt service
and interest as sized at close (what a lender runs a downside case with; the engine's
``run(scn, debt=base)``), ``resized`` re-sculpts the debt to the current inputs without a
circular reference (:mod:`lcoe.outputs.workbook.sheets`). Named checks test the model live; a
failed check blanks the results it concerns. What needs the engine stays an engine value,
marked as such, and an input it depends on is locked (a check fails when it is changed):

* the gross AEP per turbine (the integral over the site power curve) and the speed
  sensitivity; the wind and turbine inputs and the rated power are locked;
* the schedule held at close, the break-even PPA price (a goal seek; shown only while no
  input is changed), Monte Carlo and sensitivity results.

Every key of the report's ``metrics`` is a workbook-level defined name of the same
spelling pointing at its formula on the summary. Text from the scenario is always
written as text, never as a formula. The file is written atomically.
"""

from lcoe.outputs.workbook.book import build, write
from lcoe.outputs.workbook.cells import FIRST_ROW, T0_COL, YEAR_ROW

__all__ = ["build", "write", "FIRST_ROW", "T0_COL", "YEAR_ROW"]
