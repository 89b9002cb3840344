"""The portfolio on a real Dask cluster: a scheduler and two worker processes started here with
the ``dask scheduler`` and ``dask worker`` commands, every one on 127.0.0.1 only, give the
local result exactly (outside reference: the same command run without the cluster).
The processes are stopped by their ids afterwards."""

from __future__ import annotations

import json
import os
import shutil
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest
from conftest import ROOT

DEMO_PORTFOLIO = ROOT / "assumptions" / "portfolio_demo.toml"
HOST = "127.0.0.1"


def _dask_command() -> str:
    beside = Path(sys.executable).with_name("dask")
    found = str(beside) if beside.exists() else shutil.which("dask")
    if found is None:
        if os.environ.get("CI"):
            pytest.fail("the dask command is required under CI (installed with the package)")
        pytest.skip("the dask command is not installed")
    return found


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


def _wait_for_port(port: int, proc: subprocess.Popen, timeout: float = 30.0) -> None:
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if proc.poll() is not None:
            raise AssertionError(f"the scheduler exited with code {proc.returncode}")
        try:
            with socket.create_connection((HOST, port), timeout=0.5):
                return
        except OSError:
            time.sleep(0.2)
    raise AssertionError(f"no scheduler on {HOST}:{port} after {timeout} s")


def _portfolio_json(*extra: str) -> dict:
    done = subprocess.run([sys.executable, "-m", "lcoe", "portfolio", str(DEMO_PORTFOLIO), "--json",
                           "--trials", "2500", *extra], cwd=ROOT, capture_output=True, text=True, timeout=180)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout)


def _stop(procs: list[subprocess.Popen]) -> None:
    """SIGTERM to each process by its id, the workers together first and then the scheduler
    (a worker that loses its scheduler first keeps trying to reach it); SIGKILL for one still
    running after 20 s."""
    for group in (procs[1:], procs[:1]):
        for p in group:
            if p.poll() is None:
                os.kill(p.pid, signal.SIGTERM)
        for p in group:
            try:
                p.wait(timeout=20)
            except subprocess.TimeoutExpired:
                os.kill(p.pid, signal.SIGKILL)
                p.wait(timeout=5)


@pytest.mark.slow
def test_a_real_scheduler_and_two_workers_give_the_local_result_exactly(tmp_path):
    dask = _dask_command()
    port = _free_port()
    address = f"tcp://{HOST}:{port}"
    procs: list[subprocess.Popen] = []
    log = open(tmp_path / "cluster.log", "w")
    try:
        procs.append(subprocess.Popen([dask, "scheduler", "--host", HOST, "--port", str(port), "--no-dashboard"],
                                      cwd=tmp_path, stdout=log, stderr=subprocess.STDOUT))
        _wait_for_port(port, procs[0])
        for i in range(2):
            # no nanny: each worker is one process, stopped by its own id
            procs.append(subprocess.Popen([dask, "worker", address, "--host", HOST, "--nthreads", "1", "--no-nanny",
                                           "--no-dashboard", "--name", f"w{i}",
                                           "--local-directory", str(tmp_path / f"w{i}")],
                                          cwd=tmp_path, stdout=log, stderr=subprocess.STDOUT))
        from distributed import Client
        with Client(address, timeout="30s") as client:
            client.wait_for_workers(2, timeout=60)
        on_cluster = _portfolio_json("--scheduler", address)
    finally:
        _stop(procs)
        log.close()
    # the same portfolio through this process's local cluster (the command's default)
    from lcoe.analysis import cluster
    from lcoe.analysis import portfolio as ap
    from lcoe.inputs import portfolio as ip
    with cluster.local(2) as runner:
        local = json.loads(json.dumps(ap.run(ip.load(DEMO_PORTFOLIO), trials=2500, runner=runner).report()))
    ex = on_cluster["execution"]
    assert (ex["mode"], ex["workers"], ex["scheduler"]) == ("scheduler", 2, address)
    assert local["execution"]["mode"] == "local"
    on_cluster.pop("execution")
    local.pop("execution")
    assert on_cluster == local
    assert all(p.returncode is not None for p in procs)
