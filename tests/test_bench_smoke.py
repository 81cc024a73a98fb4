"""Smoke run of the benchmark (bench/run.py) at a tiny size.

The benchmark is not a unit test and its timings are not asserted (they
depend on the machine and its load); this only keeps the script working:
it generates a 2-bay, 3-storey frame, measures it in child processes and
returns a results dict with the documented keys.  The frame itself is
checked against the drawing convention's counting rule for a regular
frame (columns plus beams), not against anything the code computed.
"""
from __future__ import annotations

import json
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

bench_run = pytest.importorskip("bench.run")
bench_generate = pytest.importorskip("bench.generate")


def test_generated_frame_counts(tmp_path):
    spec = bench_generate.spec_for_members(15)
    # a regular frame of b bays and s storeys has (b + 1) * s columns and
    # b * s beams (counting by hand; common practice for frame models)
    assert (spec.bays, spec.storeys) == (2, 3)
    assert spec.members == (spec.bays + 1) * spec.storeys + spec.bays * spec.storeys
    path = bench_generate.write_frame(spec, tmp_path / "f.dxf")
    assert path.is_file() and (tmp_path / "dxf2frame.toml").is_file()


def test_quick_run_produces_results_dict(tmp_path):
    res = bench_run.run([15], batch=2, batch_members=15, repeat=1, workdir=tmp_path)
    assert {"schema", "machine", "sizes", "growth", "batch", "targets", "seconds"} <= set(res)
    (row,) = res["sizes"]
    assert {"target", "members", "bays", "storeys", "floor_s", "solve_s", "ratio", "stages", "peak_mib",
            "results"} <= set(row)
    assert set(row["stages"]) == set(bench_run.STAGES)
    assert row["members"] == 15
    # three load cases (D, L, W) plus the built-in combinations: more results than cases
    assert row["results"] > 3
    assert {"files", "workers_1_s", "workers_2_s", "speedup", "ok", "machine_ceiling"} <= set(res["batch"])
    assert res["batch"]["ok"] == 2
    assert res["growth"] is None  # 5,000 and 20,000 were not run
    assert [t["key"] for t in res["targets"]] == [t[0] for t in bench_run.TARGETS]
    json.dumps(res)  # the results file is plain JSON
    text = bench_run.format_table(res)
    assert "targets:" in text
