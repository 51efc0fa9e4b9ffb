"""``archive report --scheduler``: the same report on a real, separately started Dask cluster.

Starts ``dask scheduler`` and two ``dask worker`` processes on 127.0.0.1 (no dashboards),
runs the report through ``--scheduler``, compares it with the embedded local cluster's
report and stops them (each by its own process id).
"""

from __future__ import annotations

import json
import subprocess
import sys
import time
from pathlib import Path

import pytest

from tests.archive.archive_inputs import cli, write_csv_log, write_settings

pytestmark = pytest.mark.slow

#: Generous waits: the test machine has two cores shared with other work.
START_TIMEOUT_S = 120


def _dask(*args: str, log: Path) -> subprocess.Popen[bytes]:
    dask = Path(sys.executable).with_name("dask")
    with log.open("wb") as handle:  # the child keeps its own copy of the descriptor
        return subprocess.Popen([str(dask), *args], stdout=handle, stderr=subprocess.STDOUT,
                                stdin=subprocess.DEVNULL)


def _stop(proc: subprocess.Popen[bytes]) -> None:
    if proc.poll() is None:
        proc.terminate()
        try:
            proc.wait(timeout=30)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(timeout=30)


def _wait_for(path: Path, procs: list[subprocess.Popen[bytes]]) -> None:
    deadline = time.monotonic() + START_TIMEOUT_S
    while not path.exists() or not path.read_text(encoding="utf-8").strip():
        assert all(p.poll() is None for p in procs), "a dask process ended early"
        assert time.monotonic() < deadline, f"{path} did not appear"
        time.sleep(0.5)


def test_report_on_an_existing_cluster_equals_the_local_one(tmp_path):
    settings = write_settings(tmp_path / "s.toml", "Mast",
                              '[[criteria]]\nindicator = "Lden"\nlimit_db = 60.0\n')
    logs = tmp_path / "logs"
    logs.mkdir()
    write_csv_log(logs / "june.csv", "2026-06-28 07:00:00", 6, 60, 52.0, lafmax_db=70.0)
    write_csv_log(logs / "other.csv", "2026-07-05 00:00:00", 2, 300, 61.0)
    archive = tmp_path / "archive"
    assert cli("archive", "add", str(logs), "--archive", str(archive), "--settings",
               str(settings))[0] == 0

    scheduler_file = tmp_path / "scheduler.json"
    procs: list[subprocess.Popen[bytes]] = []
    try:
        procs.append(_dask("scheduler", "--host", "127.0.0.1", "--port", "0",
                           "--no-dashboard", "--scheduler-file", str(scheduler_file),
                           log=tmp_path / "scheduler.log"))
        _wait_for(scheduler_file, procs)
        address = json.loads(scheduler_file.read_text(encoding="utf-8"))["address"]
        assert address.startswith("tcp://127.0.0.1:")
        for k in range(2):
            procs.append(_dask("worker", address, "--host", "127.0.0.1", "--nthreads", "1",
                               "--nworkers", "1", "--no-dashboard", "--memory-limit", "1GiB",
                               "--name", f"w{k}", log=tmp_path / f"worker{k}.log"))
        from distributed import Client

        with Client(address, timeout=START_TIMEOUT_S) as client:
            client.wait_for_workers(2, timeout=START_TIMEOUT_S)
        code, out, err = cli("archive", "report", str(archive), "-o", str(tmp_path / "remote"),
                             "--settings", str(settings), "--scheduler", address, "--quiet")
        assert code == 0, (out, err)
    finally:
        for proc in reversed(procs):
            _stop(proc)
    code, out, err = cli("archive", "report", str(archive), "-o", str(tmp_path / "local"),
                         "--settings", str(settings), "--workers", "2", "--quiet")
    assert code == 0, (out, err)
    remote = json.loads((tmp_path / "remote" / "archive-report.json").read_text("utf-8"))
    local = json.loads((tmp_path / "local" / "archive-report.json").read_text("utf-8"))
    assert remote["engine"]["scheduler"] == address
    engine = local["engine"]
    assert (engine["name"], engine["scheduler"], engine["workers"], engine["partitions"]) == (
        "dask", "local", 2, 2)
    assert 0 < engine["peak_worker_rss_mib"] < 4096
    assert remote["positions"] == local["positions"]
    (mast,) = local["positions"]
    assert [m["month"] for m in mast["months"]] == ["2026-06", "2026-07"]
    assert len(mast["days"]) == 6 + 3


def test_a_scheduler_address_where_nothing_listens_is_refused_at_once(tmp_path: Path) -> None:
    # a mistyped port is said at once ("connection was refused"), not after Dask's whole
    # connection timeout ("no Dask scheduler answered ... within 30 s")
    import socket

    with socket.socket() as probe:  # a port that was free a moment ago
        probe.bind(("127.0.0.1", 0))
        port = probe.getsockname()[1]
    archive = tmp_path / "arch"
    archive.mkdir()
    (archive / "ingest.json").write_text('{"layout_version": 1, "inputs": []}',
                                         encoding="utf-8")
    code, _, err = cli("archive", "report", str(archive), "-o", str(tmp_path / "out"),
                       "--scheduler", f"tcp://127.0.0.1:{port}", "--quiet")
    assert code == 2 and "connection was refused" in err and "check the host and port" in err
    code, _, err = cli("archive", "report", str(archive), "-o", str(tmp_path / "out"),
                       "--scheduler", "tcp://no-such-host.invalid:8786", "--quiet")
    # RFC 2606 reserves .invalid: it never resolves
    assert code == 2 and "host name 'no-such-host.invalid' is not known" in err
