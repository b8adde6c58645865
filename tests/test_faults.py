"""Faults while a study writes its folder: the folder is the old complete run or the new one.

Each case runs the command line (in a subprocess where a signal, a resource limit or a second
process is involved) and then checks the output folder: its manifest says it is complete, it lists
exactly the files present, every hash matches, and no half-written sibling folder is left.
Behaviour checks only (no statistics are computed here).
"""

from __future__ import annotations

import ctypes
import fcntl
import hashlib
import json
import os
import resource
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from evidence.cli import main

SPEC = """
[data]
file = "panel.csv"
unit = "region"

[roles]
activity = "gdp"
population = "population"

[[pressures]]
column = "co2"

[analyses]
elasticity = ["fe"]
convergence = []
decomposition = false

[output]
formats = {formats}
figures = {figures}
"""


def _inputs(folder: Path, *, formats=("csv",), figures=False, units=4) -> Path:
    rng = np.random.default_rng(3)
    rows = []
    for i in range(units):
        for year in range(1991, 2016):
            t = year - 1991
            rows.append({"region": f"Region {i}", "year": year,
                         "gdp": 100 * np.exp(0.03 * t + 0.01 * rng.normal()),
                         "co2": 50 * np.exp((-0.02 + 0.01 * i) * t + 0.01 * rng.normal()),
                         "population": 10.0 + i})
    pd.DataFrame(rows).to_csv(folder / "panel.csv", index=False)
    spec = folder / "study.toml"
    spec.write_text(SPEC.format(formats=json.dumps(list(formats)),
                                figures="true" if figures else "false"), encoding="utf-8")
    return spec


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _complete(folder: Path) -> dict:
    """The folder is one complete run: manifest complete, exactly its files, every hash right."""
    manifest = json.loads((folder / "manifest.json").read_text(encoding="utf-8"))
    assert manifest["complete"] is True
    present = {p.relative_to(folder).as_posix() for p in folder.rglob("*") if p.is_file()}
    assert present == set(manifest["files"]) | {"manifest.json"}
    for rel, digest in manifest["files"].items():
        assert _sha(folder / rel) == digest, rel
    assert not list(folder.parent.glob(f".{folder.name}.evidence-*"))  # no half-written sibling
    return manifest


def _snapshot(folder: Path) -> dict[str, str]:
    return {p.relative_to(folder).as_posix(): _sha(p) for p in folder.rglob("*") if p.is_file()}


def _cli(*args: str, **kwargs) -> subprocess.CompletedProcess:
    env = {**os.environ, "MPLBACKEND": "Agg"}
    return subprocess.run([sys.executable, "-m", "evidence.cli", *args], capture_output=True,
                          text=True, env=env, timeout=300, check=False, **kwargs)


@pytest.fixture
def earlier_run(tmp_path):
    """A complete earlier run in ``tmp_path/out`` and its snapshot."""
    spec = _inputs(tmp_path, formats=("csv", "markdown"))
    out = tmp_path / "out"
    assert main(["study", str(spec), "--out", str(out)]) == 0
    _complete(out)
    return spec, out, _snapshot(out)


# --------------------------------------------------------------------------- the faults
def test_sigterm_mid_run_leaves_the_old_run(tmp_path, earlier_run):
    spec, out, before = earlier_run
    _inputs(tmp_path, formats=("csv", "markdown", "latex"), figures=True, units=8)
    env = {**os.environ, "MPLBACKEND": "Agg"}
    proc = subprocess.Popen([sys.executable, "-m", "evidence.cli", "study", str(spec), "--out",
                             str(out)], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True, env=env)
    deadline = time.monotonic() + 120
    caught = False
    while time.monotonic() < deadline and proc.poll() is None:
        news = list(tmp_path.glob(".out.evidence-new-*"))
        if news and list((news[0] / "tables").glob("*.tex")):  # the new run is half-way
            proc.send_signal(signal.SIGTERM)
            caught = True
            break
        time.sleep(0.02)
    _, err = proc.communicate(timeout=120)
    assert caught, "the run ended before it could be interrupted"
    assert proc.returncode == 128 + signal.SIGTERM, err
    assert "terminated" in err and "Traceback" not in err
    assert _snapshot(out) == before  # the old complete run, untouched
    _complete(out)


def test_disk_full_leaves_the_old_run(tmp_path, earlier_run):
    spec, out, before = earlier_run
    _inputs(tmp_path, formats=("csv", "markdown"), figures=True)

    def small_files() -> None:  # a disk that takes no file over 20 kB
        resource.setrlimit(resource.RLIMIT_FSIZE, (20_000, 20_000))

    done = _cli("study", str(spec), "--out", str(out), preexec_fn=small_files)
    assert done.returncode == 2, done.stderr
    assert "cannot write the results" in done.stderr and "too large" in done.stderr.lower()
    assert len(done.stderr.strip().splitlines()) == 1
    assert _snapshot(out) == before
    _complete(out)


def _without_override() -> None:
    """Run as root without the capabilities that ignore file permissions (else chmod is moot)."""
    if os.geteuid() == 0:
        libc = ctypes.CDLL(None, use_errno=True)
        for capability in (1, 2):  # CAP_DAC_OVERRIDE, CAP_DAC_READ_SEARCH
            libc.prctl(24, capability, 0, 0, 0)  # PR_CAPBSET_DROP: gone after exec


@pytest.mark.slow  # two or three fresh interpreters
def test_read_only_folders(tmp_path, earlier_run):
    spec, out, before = earlier_run
    out.chmod(0o555)
    try:
        done = _cli("study", str(spec), "--out", str(out), preexec_fn=_without_override)
        assert done.returncode == 2, done.stderr
        assert "read-only" in done.stderr and len(done.stderr.strip().splitlines()) == 1
        assert _snapshot(out) == before
        locked = tmp_path / "locked"
        locked.mkdir()
        locked.chmod(0o555)
        done = _cli("study", str(spec), "--out", str(locked / "new"), preexec_fn=_without_override)
        assert done.returncode == 2 and "cannot write in" in done.stderr, done.stderr
        assert not (locked / "new").exists()
    finally:
        out.chmod(0o755)
        if (tmp_path / "locked").exists():
            (tmp_path / "locked").chmod(0o755)


@pytest.mark.slow  # two or three fresh interpreters
def test_concurrent_runs_into_one_folder(tmp_path, earlier_run):
    spec, out, _ = earlier_run
    _inputs(tmp_path, formats=("csv", "latex"))
    env = {**os.environ, "MPLBACKEND": "Agg"}
    procs = [subprocess.Popen([sys.executable, "-m", "evidence.cli", "study", str(spec), "--out",
                               str(out)], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                              text=True, env=env) for _ in range(2)]
    results = [(p.wait(timeout=300), p.communicate()[1]) for p in procs]
    codes = [code for code, _ in results]
    assert set(codes) <= {0, 2} and 0 in codes, results
    for code, err in results:
        if code == 2:
            assert "another evidence run is writing" in err
    manifest = _complete(out)
    assert any(rel.endswith(".tex") for rel in manifest["files"])  # the new run, whole


def test_a_held_lock_stops_a_second_run(tmp_path, earlier_run, capsys):
    spec, out, before = earlier_run
    handle = os.open(tmp_path / ".out.evidence-lock", os.O_RDWR | os.O_CREAT)
    try:
        fcntl.flock(handle, fcntl.LOCK_EX)
        assert main(["study", str(spec), "--out", str(out)]) == 2
        assert "another evidence run is writing" in capsys.readouterr().err
    finally:
        os.close(handle)
    assert _snapshot(out) == before


def test_rerun_with_fewer_formats_leaves_no_stale_files(tmp_path, earlier_run):
    spec, out, _ = earlier_run
    _inputs(tmp_path, formats=("csv",))
    assert main(["study", str(spec), "--out", str(out)]) == 0
    manifest = _complete(out)
    assert not list(out.rglob("*.md")) and all(not r.endswith(".md") for r in manifest["files"])


def test_internal_failure_mid_run_leaves_the_old_run(tmp_path, earlier_run, monkeypatch, capsys):
    from evidence.study import steps

    spec, out, before = earlier_run

    def broken(panel, spec):
        raise RuntimeError("a bug in a step")

    monkeypatch.setitem(steps.STEPS, "elasticity", broken)
    assert main(["study", str(spec), "--out", str(out)]) == 1
    assert "a bug in a step" in capsys.readouterr().err
    assert _snapshot(out) == before
    _complete(out)


def test_leftovers_of_a_killed_run_are_removed(tmp_path, earlier_run):
    spec, out, _ = earlier_run
    dead = tmp_path / ".out.evidence-new-deadbeef"
    (dead / "tables").mkdir(parents=True)
    (dead / "tables" / "grade.csv").write_text("half")
    assert main(["study", str(spec), "--out", str(out)]) == 0
    assert not dead.exists()
    _complete(out)


# ----------------------------------------------------------------- what a run may replace
def test_a_folder_evidence_did_not_write_is_left_alone(tmp_path, capsys):
    spec = _inputs(tmp_path)
    out = tmp_path / "mine"
    out.mkdir()
    (out / "report.html").write_text("my own report")
    assert main(["study", str(spec), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "evidence did not write" in err and "--overwrite" in err
    assert (out / "report.html").read_text() == "my own report"
    assert main(["study", str(spec), "--out", str(out), "--overwrite"]) == 0
    _complete(out)
    (tmp_path / "file").write_text("x")
    assert main(["study", str(spec), "--out", str(tmp_path / "file")]) == 2
    assert "is a file" in capsys.readouterr().err


def test_an_added_or_changed_file_stops_the_rerun(tmp_path, earlier_run, capsys):
    spec, out, _ = earlier_run
    (out / "notes.txt").write_text("my notes")
    assert main(["study", str(spec), "--out", str(out)]) == 2
    assert "'notes.txt', which evidence did not write" in capsys.readouterr().err
    (out / "notes.txt").unlink()
    (out / "tables" / "grade.csv").write_text("edited")
    assert main(["study", str(spec), "--out", str(out)]) == 2
    assert "'tables/grade.csv', changed since evidence wrote it" in capsys.readouterr().err
    assert (out / "tables" / "grade.csv").read_text() == "edited"


def test_a_run_never_replaces_its_own_input(tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    spec = _inputs(out)
    for extra in ([], ["--overwrite"]):
        assert main(["study", str(spec), "--out", str(out), *extra]) == 2
        assert "lies inside the output folder" in capsys.readouterr().err
    assert (out / "panel.csv").exists() and (out / "study.toml").exists()


@pytest.mark.slow  # the 30-region demo panel, twice
def test_demo_keeps_an_edited_study_file(tmp_path, monkeypatch, capsys):
    import evidence.study.demo as demo

    light = (demo.demo_study_text().replace("figures = true", "figures = false")
             .replace('["fe", "twfe", "mg", "ccemg", "amg"]', '["fe"]')
             .replace('["adf", "kpss", "ips", "cips"]', "[]")
             .replace('["beta", "sigma", "stochastic", "clubs"]', "[]")
             .replace('formats = ["markdown", "latex", "html", "csv", "json"]', 'formats = ["csv"]'))
    monkeypatch.setattr(demo, "demo_study_text", lambda: light)
    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out)]) == 0
    manifest = _complete(out)
    assert {"demo_panel.csv", "demo_study.toml", "report.html"} <= set(manifest["files"])
    (out / "demo_study.toml").write_text(light + "\n# my edit\n")
    assert main(["demo", "--out", str(out)]) == 2
    assert "'demo_study.toml', changed since evidence wrote it" in capsys.readouterr().err
    assert (out / "demo_study.toml").read_text().endswith("# my edit\n")
    assert main(["demo", "--out", str(out), "--overwrite"]) == 0
    assert "# my edit" not in (out / "demo_study.toml").read_text()


# ------------------------------------------------------------------------------ the rest
def test_shipped_null_tables_are_read_with_the_cache_off(tmp_path, monkeypatch):
    import evidence._cache as cache

    params = {"q": 1, "trim": 0.15}
    shipped = tmp_path / "shipped"
    shipped.mkdir()
    np.savez(shipped / f"{cache.cache_key('demo', params)}.npz", draws=np.arange(3.0))
    monkeypatch.setattr(cache, "SHIPPED", shipped)
    monkeypatch.setenv("EVIDENCE_CACHE_DIR", "off")
    assert cache.cache_dir() is None
    assert cache.load_cached("demo", params)["draws"].tolist() == [0.0, 1.0, 2.0]
    assert cache.load_cached("demo", {"q": 2}) is None


def test_the_dask_executor_opens_no_dashboard():
    psutil = pytest.importorskip("psutil")
    pytest.importorskip("dask.distributed")
    from evidence.parallel import DaskExecutor

    executor = DaskExecutor(jobs=1)
    try:
        listening = [c.laddr for c in psutil.Process().net_connections(kind="inet")
                     if c.status == psutil.CONN_LISTEN]
        assert executor.map(abs, [-1, -2]) == [1, 2]
    finally:
        executor.close()
    assert listening and all(addr.ip == "127.0.0.1" for addr in listening), listening
    assert all(addr.port != 8787 for addr in listening)
