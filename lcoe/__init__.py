"""Wind-project LCOE and project finance for one site.

The flow runs one way: scenario -> resource/turbine -> energy -> costs -> cashflow
-> metrics -> uncertainty/sensitivity -> report/workbook/UI.
"""

from lcoe.inputs.errors import ScenarioError

__version__ = "0.1.0"

CAUTION = (
    "Indicative results only: not investment, financial or engineering advice. "
    "Defer to local codes, licensed professionals and lenders' own due diligence."
)

__all__ = ["ScenarioError", "CAUTION", "__version__"]
