"""Uploaded scenarios in the app, read so that no server file is ever shown.

An uploaded scenario's data files (the power curve, the wind series, the long-term
reference, the layout's positions; in the file or in a variant) come only from the files
uploaded with it (several files, or one zip such as the app's bundle), matched by file name, or from the
bundled demo files; a path naming anything else on the server (an absolute path, a
``../..`` climb, a link out of the bundle) is refused before it is opened. Messages shown
in the browser name the uploaded files, never a server path, and quote file content only
as the loader's short excerpts.
"""

from __future__ import annotations

import io
import re
import shutil
import tempfile
import zipfile
from pathlib import Path, PurePosixPath, PureWindowsPath

from lcoe.demo_files import assumptions_dir, demo_dir
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError, cut
from lcoe.inputs.paths import MAX_DATA_BYTES, MAX_SCENARIO_BYTES
from lcoe.inputs.toml import parse_toml_text
from lcoe.outputs.bundle import data_paths

MAX_ZIP_FILES = 64

_SAFE_NAME = re.compile(r"[^A-Za-z0-9._ -]")


def safe_name(name: str, default: str = "upload") -> str:
    """The last part of an uploaded file's name, in plain characters."""
    base = PureWindowsPath(PurePosixPath(str(name)).name).name
    base = _SAFE_NAME.sub("_", base).strip(" .") or default
    return base[:80]


def bundled() -> dict[str, Path]:
    """The demo files shipped with the package, by name: the only server files an upload may name."""
    out = {}
    for folder, pattern in ((assumptions_dir(), "*.toml"), (demo_dir(), "*.csv")):
        out.update((p.name, p.resolve()) for p in folder.glob(pattern) if p.is_file())
    return out


def new_folder() -> Path:
    return Path(tempfile.mkdtemp(prefix="lcoe-upload-"))


def clear(folder: Path | None) -> None:
    if folder is not None:
        shutil.rmtree(folder, ignore_errors=True)


def load_upload(name: str, data: bytes, data_files: dict[str, bytes], folder: Path) -> sc.Scenario:
    """An uploaded scenario, its data files taken from ``data_files`` (name -> bytes) or the bundle.

    The files are written to ``folder`` (one per session) and the scenario's paths are
    pointed at them; nothing else on the server is read.
    """
    shown = safe_name(name, "upload.toml")
    if len(data) > MAX_SCENARIO_BYTES:
        raise ScenarioError(f"is {len(data) / 2**20:,.0f} MB; a scenario file is read up to "
                            f"{MAX_SCENARIO_BYTES // 2**20} MB", file=shown)
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise ScenarioError("is not UTF-8 text", file=shown) from None
    raw = parse_toml_text(text, shown)
    uploads = {safe_name(k, "data.csv"): v for k, v in data_files.items()}
    clear(folder)
    folder.mkdir(parents=True, exist_ok=True)
    shipped = bundled()
    for (holder, field), key, rel in list(data_paths(raw)):
        if not isinstance(rel, str):
            continue            # the loader names the wrong type
        wanted = safe_name(rel.replace("\\", "/"), "")
        try:
            here = (assumptions_dir() / rel).resolve()
        except (OSError, RuntimeError, ValueError):
            here = None
        if wanted in uploads:
            (folder / wanted).write_bytes(uploads[wanted])
        elif here is not None and here in shipped.values() or wanted in shipped:
            shutil.copyfile(shipped[wanted] if wanted in shipped else here, folder / wanted)
        else:
            raise ScenarioError(f"is neither among the files uploaded with the scenario nor a bundled demo file; "
                                f"upload {wanted or 'the data file'!r} beside the scenario (data files are matched "
                                "by name)", key=key, value=rel, file=shown)
        holder[field] = wanted      # read from the session's folder, by its plain name
    return sc.from_dict(raw, source=shown, base_dir=folder)


def public(message, folder: Path | None = None) -> str:
    """A message fit for the browser: server paths replaced by the names a user knows, cut short."""
    text = message.line() if isinstance(message, ScenarioError) else str(message)
    roots = [(str(folder) + "/", "") if folder is not None else None,
             (str(assumptions_dir().parent) + "/", ""), (str(Path(tempfile.gettempdir())) + "/", "")]
    for pair in roots:
        if pair and pair[0] != "/":
            text = text.replace(pair[0], pair[1])
    # any other absolute path is shown by its last part only; "assumptions/../demo/x" as "demo/x"
    text = re.sub(r"(?<![\w.])/(?:[^\s/:'\"]+/)+([^\s/:'\"]+)", r"\1", text)
    text = re.sub(r"(?<![\w./])(?:[\w-]+/\.\./)+", "", text)
    return cut(text, 600)


def unzip(name: str, data: bytes) -> tuple[str, bytes, dict[str, bytes]]:
    """(scenario name, its bytes, the data files by name) of an uploaded zip: exactly one scenario
    file (.toml) and its data files, anywhere inside; nothing is written, sizes are bounded."""
    shown = safe_name(name, "upload.zip")
    try:
        z = zipfile.ZipFile(io.BytesIO(data))
    except (zipfile.BadZipFile, ValueError):
        raise ScenarioError("is not a zip file", file=shown) from None
    with z:
        members = [m for m in z.infolist() if not m.is_dir()]
        if len(members) > MAX_ZIP_FILES:
            raise ScenarioError(f"holds {len(members)} files; a bundle holds at most {MAX_ZIP_FILES}", file=shown)
        tomls = [m for m in members if m.filename.lower().endswith(".toml")]
        if len(tomls) != 1:
            raise ScenarioError(f"must hold exactly one scenario file (.toml), found {len(tomls)}", file=shown)
        files: dict[str, bytes] = {}
        scenario = None
        for m in members:
            limit = MAX_SCENARIO_BYTES if m in tomls else MAX_DATA_BYTES
            if m.file_size > limit:
                raise ScenarioError(f"member {safe_name(m.filename)!r} is {m.file_size / 2**20:,.0f} MB; the limit "
                                    f"is {limit // 2**20} MB", file=shown)
            with z.open(m) as f:
                body = f.read(limit + 1)
            if len(body) > limit:
                raise ScenarioError(f"member {safe_name(m.filename)!r} is larger than it says", file=shown)
            if m in tomls:
                scenario = (safe_name(m.filename, "scenario.toml"), body)
            else:
                files[safe_name(m.filename, "data.csv")] = body
    return scenario[0], scenario[1], files
