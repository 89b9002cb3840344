"""The tool's version and the caution every output carries."""

__version__ = "0.1.0"

CAUTION = (
    "Indicative results only: not investment, financial or engineering advice. "
    "Defer to local codes, licensed professionals and lenders' own due diligence."
)
