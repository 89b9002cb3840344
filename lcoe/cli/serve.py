"""The app's server process: the engine loaded before Streamlit starts, so the first visitor waits
for no import.

``lcoe app`` replaces itself with ``python -m lcoe.cli.serve run APP --server.* ...``: this module
imports what the app's first run needs (the engine, the analyses, the outputs, the chart library),
then hands the same command line to Streamlit's own command (``streamlit run ...``) in this
process. Streamlit runs the app in this process, where those modules are already imported.
"""

from __future__ import annotations

import sys

PRELOAD = ("lcoe.engine", "lcoe.analysis.study", "lcoe.analysis.lifetime", "lcoe.analysis.sensitivity",
           "lcoe.analysis.montecarlo", "lcoe.analysis.wind_data", "lcoe.outputs.report", "lcoe.outputs.bundle",
           "lcoe.outputs.workbook", "altair", "pandas")


def preload() -> None:
    import importlib
    for name in PRELOAD:
        importlib.import_module(name)


def main(argv: list[str]) -> int:
    preload()
    from streamlit.web import cli as streamlit_cli
    sys.argv = ["streamlit", *argv]
    return streamlit_cli.main(prog_name="streamlit")


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
