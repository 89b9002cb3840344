"""Start-up of the command line: help without the engine, the one-line notice when the compiled
kernels are built, the start-up timings of ``lcoe bench`` and the demo found from any folder.

Speed itself is measured by ``lcoe bench`` (``cli_help_s``, ``cold_run_s``, ``warm_run_s``), never
asserted here: these tests check what is imported and what is printed.
"""

from __future__ import annotations

import fnmatch
import json
import os
import shutil
import subprocess
import sys
import tomllib

import numpy as np
from conftest import DEMO, ROOT
from scipy import stats

from lcoe.analysis import montecarlo
from lcoe.cli import bench, kernels, main

HEAVY = ("numpy", "scipy", "numba", "pandas", "pydantic", "openpyxl", "dask", "lcoe.engine")


def _python(code: str, cwd, env=None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-c", code], cwd=cwd, env=env, capture_output=True, text=True,
                          timeout=300)


def test_help_of_every_command_imports_no_engine(tmp_path):
    """`lcoe --help` and each command's help build the parser alone: none of the heavy modules is loaded."""
    for cmd in [c for c in bench.HELP_COMMANDS]:
        code = ("import sys\nfrom lcoe.cli import main\n"
                f"rc = main({[*cmd, '--help']!r})\n"
                f"print(rc, [m for m in {HEAVY!r} if m in sys.modules])")
        done = _python(code, tmp_path)
        assert done.returncode == 0, done.stderr
        assert done.stdout.strip().splitlines()[-1] == "0 []", (cmd, done.stdout[-300:])


def test_the_kernel_notice_once_when_built_and_never_when_cached(tmp_path):
    """A fresh numba cache: the one line on stderr, once; the same run again (cached): no line."""
    env = dict(os.environ, NUMBA_CACHE_DIR=str(tmp_path / "cache"))
    argv = [sys.executable, "-m", "lcoe", "run", str(DEMO), "--brief", "--trials", "200"]
    cold = subprocess.run(argv, cwd=tmp_path, env=env, capture_output=True, text=True, timeout=600)
    assert cold.returncode == 0, cold.stderr
    assert cold.stderr.splitlines().count(kernels.NOTICE) == 1
    assert "preparing" not in cold.stdout            # stderr only: a pipe of the table stays clean
    warm = subprocess.run(argv, cwd=tmp_path, env=env, capture_output=True, text=True, timeout=600)
    assert warm.returncode == 0, warm.stderr
    assert warm.stderr == ""                          # piped: no notice, no progress bar
    assert warm.stdout == cold.stdout                # the same report, built or cached


def test_the_notice_text():
    assert kernels.NOTICE.startswith("preparing the fast kernels, once: about ")
    assert kernels.NOTICE.endswith(f"{kernels.ESTIMATE_S} s")


def test_poisson_table_equals_scipy_stats():
    """The failure counts' CDF, from scipy.special, against scipy.stats.poisson.cdf (source: scipy.stats)."""
    for lam in (1e-6, 0.013, 0.2, 1.0, 3.7, 12.5, 30.0):
        kmax = int(lam + 12.0 * np.sqrt(lam) + 20)
        ours = montecarlo._poisson_cdf32(lam, kmax)
        np.testing.assert_allclose(ours, stats.poisson.cdf(np.arange(kmax + 1), lam).astype(np.float32),
                                   rtol=2e-7, atol=1e-7)
        np.testing.assert_array_equal(ours, np.cumsum(stats.poisson.pmf(np.arange(kmax + 1), lam))
                                      .astype(np.float32))


def test_bench_json_reports_the_startup_keys(capsys, monkeypatch):
    """`lcoe bench --json` carries cli_help_s, cold_run_s and warm_run_s (one warm run here, to be quick)."""
    monkeypatch.setattr(bench, "startup_bench", lambda path, warm_runs=1, real=bench.startup_bench: real(path, 1))
    rc = main(["bench", "--trials", "200", "--loop-sample", "5", "--repeat", "1", "--portfolio-sites", "0", "--json"])
    res = json.loads(capsys.readouterr().out)
    assert rc == 0
    assert set(res) >= {"cli_help_s", "cold_run_s", "warm_run_s", "engine_s"}
    assert set(res["cli_help_by_command_s"]) == {" ".join(c) or "lcoe" for c in bench.HELP_COMMANDS}
    assert res["cli_help_s"] == max(res["cli_help_by_command_s"].values()) > 0
    assert res["cold_run_s"] > 0 and res["warm_run_s"] > 0 and len(res["warm_runs_s"]) == 1


def test_bench_names_a_failing_command(tmp_path):
    try:
        bench._timed_command(["run", str(tmp_path / "missing.toml")], tmp_path)
    except AssertionError as exc:
        assert "lcoe run" in str(exc) and "missing.toml" in str(exc)
    else:
        raise AssertionError("a failing command must raise")


def test_help_returns_zero_in_process(capsys):
    assert main(["--help"]) == 0
    assert "usage: lcoe" in capsys.readouterr().out


def _installed_copy(site) -> None:
    """The package laid out as `pip install .` lays it out, from pyproject.toml's packages, package-dir
    and package-data (so the test follows the real packaging, not a copy of it)."""
    conf = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]
    dirs, data = conf.get("package-dir", {}), conf.get("package-data", {})
    for package in conf["packages"]:
        src = ROOT / dirs.get(package, package.replace(".", "/"))
        dst = site / package.replace(".", "/")
        dst.mkdir(parents=True, exist_ok=True)
        for f in src.iterdir():
            if f.is_file() and (f.suffix == ".py" or any(fnmatch.fnmatch(f.name, p) for p in data.get(package, []))):
                shutil.copy2(f, dst / f.name)


def test_bench_and_the_demo_from_an_installed_copy_in_another_folder(tmp_path):
    """Installed (no checkout beside it) and run from an empty folder: the demo is the package's own."""
    site, elsewhere = tmp_path / "site", tmp_path / "elsewhere"
    _installed_copy(site)
    elsewhere.mkdir()
    env = dict(os.environ, PYTHONPATH=str(site))
    where = _python("import lcoe, lcoe.demo_files as d\nprint(lcoe.__file__)\nprint(d.demo_scenario())\n"
                    "print(d.demo_dir())", elsewhere, env)
    assert where.returncode == 0, where.stderr
    lines = where.stdout.split()
    assert all(line.startswith(str(site)) for line in lines), lines     # not the checkout's folders
    done = subprocess.run([sys.executable, "-m", "lcoe", "bench", "--trials", "200", "--loop-sample", "5",
                           "--repeat", "1", "--portfolio-sites", "0", "--no-startup", "--json"],
                          cwd=elsewhere, env=env, capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr
    assert json.loads(done.stdout)["scenario"] == lines[1]
    run = subprocess.run([sys.executable, "-m", "lcoe", "run", lines[1], "--brief", "--trials", "0"],
                         cwd=elsewhere, env=env, capture_output=True, text=True, timeout=600)
    assert run.returncode == 0, run.stderr
    assert "Tallowmere Ridge" in run.stdout
