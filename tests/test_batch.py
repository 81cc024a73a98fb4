"""Batch solving: a folder of revisions with one broken and one unstable file.

Drawings are generated here with ezdxf and the project's symbol blocks.
"""
from __future__ import annotations

import sys
from pathlib import Path

import ezdxf
import pytest

from dxf2frame.batch import batch_exit_code, expand_inputs, solve_many, summary_table
from dxf2frame.cli import main
from dxf2frame.errors import Dxf2FrameError
from dxf2frame.pipeline import EXIT_BAD_INPUT, EXIT_OK, EXIT_UNSTABLE, FileOutcome, SolveRequest
from dxf2frame.symbols import define_blocks, define_layers, insert_symbol

SETTINGS = """\
[units]
force = "kN"
[combinations]
builtin = []
"""


def beam_drawing(path: Path, *, span: float = 6.0, w: str | None = "10 kN/m", supports=("PIN", "ROLLER")) -> Path:
    """A beam on FRAME from (0, 0) to (span, 0), supports at its ends, a
    uniform gravity load over the whole span; drawing unit metres."""
    doc = ezdxf.new("R2018")
    doc.header["$INSUNITS"] = 6
    define_layers(doc)
    define_blocks(doc)
    msp = doc.modelspace()
    msp.add_line((0, 0), (span, 0), dxfattribs={"layer": "FRAME"})
    insert_symbol(msp, supports[0], (0, 0), layer="SUPPORTS", scale=0.2)
    insert_symbol(msp, supports[1], (span, 0), layer="SUPPORTS", scale=0.2)
    if w:
        insert_symbol(msp, "UDL", (span / 3, 0), layer="LOADS", scale=0.2, W=w, CASE="D")
    doc.saveas(path)
    return path


@pytest.fixture
def revisions(tmp_path) -> list[Path]:
    folder = tmp_path / "revisions"
    folder.mkdir()
    (folder / "dxf2frame.toml").write_text(SETTINGS)
    files = [
        beam_drawing(folder / "rev-1.dxf", w="10 kN/m"),
        beam_drawing(folder / "rev-2.dxf", w="12 kN/m"),
        folder / "rev-3.dxf",
        beam_drawing(folder / "rev-4.dxf", supports=("ROLLER", "ROLLER")),  # nothing holds it along X
    ]
    files[2].write_bytes(b"\x00\x9f garbage, not a drawing \xff" * 40)
    return files


def check_outcomes(outcomes: list[FileOutcome], files: list[Path]) -> None:
    assert [Path(o.source).name for o in outcomes] == [f.name for f in files]  # order of the inputs
    assert [o.status for o in outcomes] == ["ok", "ok", "bad input", "unstable"]
    assert [o.exit_code for o in outcomes] == [EXIT_OK, EXIT_OK, EXIT_BAD_INPUT, EXIT_UNSTABLE]
    assert outcomes[0].determinacy == "determinate" and outcomes[3].determinacy == "unstable"
    # governing |M| of a simple beam under w: wL^2/8 (AISC Manual beam diagrams and formulas, case 1; from memory)
    assert outcomes[0].max_m == pytest.approx(10 * 6**2 / 8, rel=1e-6)
    assert outcomes[1].max_m == pytest.approx(12 * 6**2 / 8, rel=1e-6)  # wL^2/8 (AISC case 1, from memory)
    assert outcomes[1].max_v == pytest.approx(12 * 6 / 2, rel=1e-6)  # V = wL/2 (AISC case 1, from memory)
    assert outcomes[1].max_n == 0.0  # no axial load on a pin-roller beam (equilibrium); round-off reads 0
    assert outcomes[2].message  # names what is wrong
    assert batch_exit_code(outcomes) == EXIT_BAD_INPUT


@pytest.mark.parametrize("workers", [1, 2])
def test_batch_statuses(revisions, tmp_path, workers):
    req = SolveRequest(out=tmp_path / f"out-{workers}", png=False, single=False)
    seen = []
    outcomes = solve_many(revisions, req, workers=workers, on_done=lambda o, k, n: seen.append((k, n)))
    check_outcomes(outcomes, revisions)
    assert sorted(seen) == [(k, 4) for k in range(1, 5)]  # one progress call per file
    out = tmp_path / f"out-{workers}"
    assert (out / "rev-1-results.dxf").is_file() and (out / "rev-2-results.json").is_file()
    assert not (out / "rev-3-results.dxf").exists()  # bad input leaves nothing behind
    assert (out / "rev-4-results.json").is_file()  # unstable: report and mechanism drawing
    table = summary_table(outcomes)
    for name, status in (("rev-1.dxf", "ok"), ("rev-3.dxf", "bad input"), ("rev-4.dxf", "unstable")):
        assert any(line.startswith(name) and status in line for line in table.splitlines())


def test_cli_solve_glob(revisions, tmp_path, capsys):
    pattern = str(revisions[0].parent / "rev-*.dxf")
    code = main(["solve", pattern, "--workers", "2", "--no-png", "--out", str(tmp_path / "cli")])
    assert code == EXIT_BAD_INPUT  # one bad drawing: the batch says so, the rest are solved
    cap = capsys.readouterr()
    assert "4/4" in cap.err and "rev-3.dxf: bad input" in cap.err
    lines = cap.out.splitlines()
    assert lines[0].split()[:3] == ["file", "status", "determinacy"]
    assert sum("ok" in ln.split() for ln in lines) == 2
    assert (tmp_path / "cli" / "rev-2-results.dxf").is_file()


def test_expand_inputs_keeps_order_and_missing_names(revisions):
    folder = revisions[0].parent
    got = expand_inputs([str(folder / "rev-2.dxf"), str(folder / "rev-*.dxf"), str(folder / "nope.dxf")])
    assert [p.name for p in got] == ["rev-2.dxf", "rev-1.dxf", "rev-3.dxf", "rev-4.dxf", "nope.dxf"]
    assert [p.name for p in expand_inputs([str(folder)])] == ["rev-1.dxf", "rev-2.dxf", "rev-3.dxf", "rev-4.dxf"]


def test_exit_code_priority():
    def o(code):
        return FileOutcome("x.dxf", "", code)

    assert batch_exit_code([o(0), o(0)]) == 0
    assert batch_exit_code([o(0), o(3)]) == 3
    assert batch_exit_code([o(3), o(1), o(0)]) == 1
    assert batch_exit_code([o(3), o(1), o(2)]) == 2


def test_dask_missing_is_a_clear_error(revisions, monkeypatch, tmp_path):
    monkeypatch.setitem(sys.modules, "distributed", None)  # import distributed -> ImportError
    with pytest.raises(Dxf2FrameError, match=r"pip install 'dxf2frame\[dask\]'"):
        solve_many(revisions[:1], SolveRequest(out=tmp_path / "d", png=False), scheduler="local")


def test_dask_local_cluster(revisions, tmp_path):
    pytest.importorskip("distributed")
    req = SolveRequest(out=tmp_path / "dask", png=False, single=False)
    outcomes = solve_many(revisions, req, scheduler="local")
    check_outcomes(outcomes, revisions)


def test_dask_backend_maps_results_back_to_files(revisions, monkeypatch, tmp_path, capsys):
    """The Dask glue on a stand-in for ``distributed`` (the real one runs in
    test_dask_local_cluster when installed): results come back out of order
    and one task dies; every file still gets its own outcome."""
    import types

    class Future:
        def __init__(self, fn, args, key):
            self.key, self._fn, self._args = key, fn, args

        def result(self):
            if str(self._args[0]).endswith("rev-2.dxf"):
                raise OSError("worker lost")
            return self._fn(*self._args)

    class Client:
        closed = []

        def __init__(self, target, **kw):
            self.target = target

        def submit(self, fn, *args, key, **kw):
            return Future(fn, args, key)

        def close(self):
            Client.closed.append(self.target)

    class LocalCluster:
        def __init__(self, **kw):
            assert kw.get("processes") is False  # an in-process cluster

        def close(self):
            Client.closed.append("cluster")

    fake = types.ModuleType("distributed")
    fake.Client, fake.LocalCluster = Client, LocalCluster
    fake.as_completed = lambda futures: reversed(list(futures))
    monkeypatch.setitem(sys.modules, "distributed", fake)

    outcomes = solve_many(revisions, SolveRequest(out=tmp_path / "fake", png=False, single=False), scheduler="local")
    assert [o.status for o in outcomes] == ["ok", "internal error", "bad input", "unstable"]
    assert "worker lost" in outcomes[1].message
    assert outcomes[0].max_m == pytest.approx(10 * 6**2 / 8, rel=1e-6)  # wL^2/8 (AISC case 1, from memory)
    assert len(Client.closed) == 2  # the client and the local cluster are closed


def test_cli_scheduler_without_dask_exits_2(revisions, monkeypatch, tmp_path, capsys):
    monkeypatch.setitem(sys.modules, "distributed", None)
    code = main(["solve", str(revisions[0]), "--scheduler", "local", "--no-png", "--out", str(tmp_path / "x")])
    assert code == 2
    assert "pip install 'dxf2frame[dask]'" in capsys.readouterr().err


def test_same_names_in_one_out_folder_are_refused(revisions, tmp_path):
    other = tmp_path / "elsewhere"
    other.mkdir()
    twin = other / "rev-1.dxf"
    twin.write_bytes(revisions[0].read_bytes())
    req = SolveRequest(out=tmp_path / "one-folder", png=False, single=False)
    with pytest.raises(Dxf2FrameError, match="rev-1"):
        solve_many([revisions[0], twin], req, workers=1)
    assert not (tmp_path / "one-folder").exists()  # refused before anything was written
    # without --out each result goes beside its own drawing: no clash
    outs = solve_many([revisions[0], twin], SolveRequest(png=False, single=False), workers=1)
    assert [o.status for o in outs] == ["ok", "ok"]


def test_request_paths_may_be_strings(revisions, tmp_path):
    """A script may give the output folder as a string."""
    req = SolveRequest(out=str(tmp_path / "as-text"), png=False, single=False)
    assert isinstance(req.out, Path)
    outcomes = solve_many(revisions[:1], req, workers=1)
    assert [o.exit_code for o in outcomes] == [EXIT_OK]
    assert list((tmp_path / "as-text").glob("*.dxf"))


def test_dask_killed_worker_reads_as_the_local_pool_says_it():
    """After Dask has run a task on as many workers as it allows and each
    was killed, the drawing is 'worker killed' (status 1), as in the local
    pool; any other failure is an internal error."""
    from dxf2frame.distributed import failed_outcome

    class KilledWorker(Exception):  # the name distributed gives it
        pass

    out = failed_outcome("big.dxf", KilledWorker("task dxf2frame-solve-1 marked as failed"))
    assert out.status == "worker killed" and out.exit_code == 1 and "killed" in out.message
    other = failed_outcome("big.dxf", RuntimeError("boom"))
    assert other.status == "internal error" and "RuntimeError: boom" in other.message


@pytest.mark.parametrize("given, expected", [(None, "1"), ("3", "3")])
def test_command_line_runs_numerics_on_one_thread_unless_told(given, expected):
    """The command sets one BLAS/OpenMP thread before numpy loads (batches run
    a process per core); a count the user set is kept."""
    import os
    import subprocess

    from dxf2frame.cli import THREAD_VARIABLES

    env = {k: v for k, v in os.environ.items() if k not in THREAD_VARIABLES}
    if given is not None:
        env["OPENBLAS_NUM_THREADS"] = given
    code = ("import os, sys; from dxf2frame.cli import single_threaded_numerics; single_threaded_numerics(); "
            "import numpy; print(os.environ['OPENBLAS_NUM_THREADS'], os.environ['OMP_NUM_THREADS'])")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, check=True)
    assert out.stdout.split() == [expected, "1"]
