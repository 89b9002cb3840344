"""``lcoe app``: start the interactive app (Streamlit on the installed ``lcoe.ui`` package's ``app.py``).

The app's source is the top-level ``ui/`` folder; the package ships it as ``lcoe.ui``,
so ``lcoe app`` works from any folder after ``pip install .``.
"""

from __future__ import annotations

import importlib.util
import os
import sys
from pathlib import Path


def find_app() -> Path | None:
    """``app.py`` of the installed ``lcoe.ui`` package (None when it is missing)."""
    spec = importlib.util.find_spec("lcoe.ui")
    if spec is None or not spec.submodule_search_locations:
        return None
    for folder in spec.submodule_search_locations:
        path = Path(folder) / "app.py"
        if path.is_file():
            return path
    return None


def streamlit_argv(app: Path, port: int, address: str) -> list[str]:
    """The command line that serves the app without opening a browser (Streamlit's ``run``, by
    :mod:`lcoe.cli.serve`, which loads the engine first)."""
    return [sys.executable, "-m", "lcoe.cli.serve", "run", str(app),
            "--server.headless", "true", "--server.port", str(port), "--server.address", address,
            "--browser.gatherUsageStats", "false", "--client.toolbarMode", "minimal",
            # the app shows every failure as one message; should one escape, no traceback reaches the browser
            "--client.showErrorDetails", "none"]


def cmd_app(args) -> int:
    app = find_app()
    if app is None:
        print("error: the app is not installed: the package lcoe.ui has no app.py (reinstall with `pip install .`)",
              file=sys.stderr)
        return 2
    argv = streamlit_argv(app, args.port, args.address)
    print(f"lcoe app: serving {app} at http://{args.address}:{args.port} (Ctrl+C stops it)", flush=True)
    # Replace this process, so stopping `lcoe app` stops the server too.
    os.execv(argv[0], argv)
    return 0  # not reached
