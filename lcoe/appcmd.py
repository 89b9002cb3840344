"""``lcoe app``: start the interactive app (Streamlit on ``ui/app.py``).

The app lives in the source tree, beside the package (``ui/app.py``), not inside it.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

APP_RELATIVE = Path("ui") / "app.py"


def find_app(root: Path | None = None) -> Path | None:
    """``ui/app.py`` of the source tree this package sits in (None when not found)."""
    root = Path(__file__).resolve().parents[1] if root is None else Path(root)
    path = root / APP_RELATIVE
    return path if path.is_file() else None


def streamlit_argv(app: Path, port: int, address: str) -> list[str]:
    """The command line that serves the app without opening a browser."""
    return [sys.executable, "-m", "streamlit", "run", str(app),
            "--server.headless", "true", "--server.port", str(port), "--server.address", address,
            "--browser.gatherUsageStats", "false", "--client.toolbarMode", "minimal"]


def cmd_app(args) -> int:
    app = find_app()
    if app is None:
        where = Path(__file__).resolve().parents[1] / APP_RELATIVE
        print(f"error: the app is not installed: {where} not found (run `lcoe app` from a source checkout, "
              "or `streamlit run ui/app.py` in it)", file=sys.stderr)
        return 2
    argv = streamlit_argv(app, args.port, args.address)
    print(f"lcoe app: serving {app} at http://{args.address}:{args.port} (Ctrl+C stops it)", flush=True)
    # Replace this process, so stopping `lcoe app` stops the server too.
    os.execv(argv[0], argv)
    return 0  # not reached


def register(sub) -> None:
    from lcoe.cli import whole_number
    a = sub.add_parser("app", help="start the interactive app in the browser (Streamlit)")
    a.add_argument("--port", type=whole_number(1, 65535), default=8501, help="port to serve on (default 8501)")
    a.add_argument("--address", default="127.0.0.1",
                   help="address to listen on (default 127.0.0.1, this machine only)")
    a.set_defaults(func=cmd_app)
