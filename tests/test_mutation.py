"""Mutation suite: the demo drawings, corrupted at random, through the CLI.

Each mutation takes one of the two demo revisions (``drawings/``) and
damages it one way:

* ``truncate``   cut the file at a random byte;
* ``flip``       overwrite 1-8 random bytes (half of them inside the
                 ENTITIES section) with random values;
* ``drop-line``  delete one line of the DXF text (code/value pairs shift);
* ``delete``     delete 1-3 whole entities (an INSERT with its ATTRIBs);
* ``attribute``  replace 1-3 attribute values with garbage (NaN, 1e999,
                 units of the wrong kind, text in other scripts, ...);
* ``value``      replace one group value of an entity with garbage;
* ``duplicate``  copy an entity elsewhere (two entities, one handle);
* ``layer``      move an entity to another layer (input, result, none);
* ``block``      rename a block reference to another symbol (or none);
* ``coordinate`` scale one coordinate, angle or scale factor by 1e-12 ..
                 1e300.

and runs ``check`` or ``solve --no-png`` in-process through
``dxf2frame.cli.main``.  Asserted for every mutation: the exit status is 0,
2 or 3 (never 1, never an escaped exception); no traceback on stderr; bad
input (2) gives exactly one line on stderr and leaves no file at all in the
output folder (hidden staging files included); a successful or unstable
solve leaves only complete outputs (the JSON parses); the input file's
bytes and timestamp are unchanged and nothing else appears beside it.

Every mutation has its own seed, ``base + i``; a failure prints the seed,
the drawing, the mutation and the command.  Reproduce one with::

    python tests/test_mutation.py SEED [mutated.dxf]

which writes the mutated drawing (and prints what was done to it).

Budget
------
CI (default): 320 mutations, every eighth one through ``solve``, the
others through ``check``.  Long run::

    DXF2FRAME_LONG=1 pytest tests/test_mutation.py          # 3000 mutations

``DXF2FRAME_MUTATIONS=N`` sets the count and ``DXF2FRAME_MUTATION_SEED=S``
the base seed of either run.
"""
from __future__ import annotations

import contextlib
import io
import json
import os
import random
import shutil
import sys
from dataclasses import dataclass
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "drawings"
DRAWINGS = ("packing-shed-rev-A.dxf", "packing-shed-rev-B.dxf")

LONG = os.environ.get("DXF2FRAME_LONG", "") == "1"
COUNT = int(os.environ.get("DXF2FRAME_MUTATIONS", "3000" if LONG else "320"))
BASE_SEED = int(os.environ.get("DXF2FRAME_MUTATION_SEED", "20240917"))
CHUNK = 20
SOLVE_EVERY = 8

#: replacement values: numbers that are not finite or absurd, units of the
#: wrong kind, other scripts, control characters, very long text
GARBAGE = (
    "", " ", "nan", "NaN", "inf", "-inf", "1e999", "-1e999", "1e300", "-1e308", "1e-300", "-1e-320", "5e15",
    "abc", "äöü €", "荷重", "10 kN*m", "5 m", "1e5 kip/ft", "1e200 kN", "1e300 kip*ft", "2**99", "10**10**10",
    "((", "0", "-0", "x" * 300, "\u22125 kN", "12,5", "1.5.5", "0x1F", "\t", "None", "10 kN/0", "1/0",
    "9" * 40, "-", "deg", "*U1", "FRAME", "LOADS", "EOF", "\x00", "\u202e5 kN",
)
SYMBOLS = ("PIN", "ROLLER", "FIXED", "SLIDER", "SPRING", "JOINT", "HINGE", "FORCE", "COUPLE", "UDL", "NOPE", "")
LAYERS = ("FRAME", "FRAME-X", "FRAME-Träger", "SUPPORTS", "LOADS", "CONNECTIONS", "0", "RESULT-AXIAL", "")
SCALES = (1e-12, 1e-6, -1.0, 0.0, 1e3, 1e6, 1e9, 1e12, 1e15, 1e300)
KINDS = ("truncate", "flip", "drop-line", "delete", "attribute", "value", "duplicate", "layer", "block",
         "coordinate")
# byte-level damage mostly exercises the DXF library; the entity-level kinds
# reach the reader, the cleanup, the solver and the writers: weight them up
WEIGHTS = (1, 1, 1, 2, 2, 2, 1, 1, 1, 2)


# ---------------------------------------------------------------------------
# the mutation engine (plain text/bytes; no DXF library involved)
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Mutation:
    seed: int
    drawing: str
    kind: str
    detail: str
    data: bytes

    def __str__(self) -> str:
        return f"seed={self.seed} drawing={self.drawing} mutation={self.kind}: {self.detail[:200]}"


def _tags(text: str) -> list[tuple[str, str]]:
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    return [(lines[i], lines[i + 1] if i + 1 < len(lines) else "") for i in range(0, len(lines), 2)]


def _text(tags: list[tuple[str, str]]) -> str:
    return "".join(f"{c}\n{v}\n" for c, v in tags)


def _entity_groups(tags: list[tuple[str, str]]) -> list[tuple[int, int, str]]:
    """(first tag, end tag, type) of each entity of the ENTITIES section; an
    INSERT or POLYLINE keeps its ATTRIB/VERTEX/SEQEND followers."""
    start = next((i for i, (c, v) in enumerate(tags) if c.strip() == "2" and v.strip() == "ENTITIES"), None)
    if start is None:
        return []
    heads, i = [], start + 1
    while i < len(tags):
        c, v = tags[i]
        if c.strip() == "0":
            if v.strip() == "ENDSEC":
                break
            heads.append(i)
        i += 1
    groups: list[list] = []
    for k, h in enumerate(heads):
        end = heads[k + 1] if k + 1 < len(heads) else i
        kind = tags[h][1].strip()
        if groups and kind in ("ATTRIB", "VERTEX", "SEQEND") and groups[-1][2] in ("INSERT", "POLYLINE"):
            groups[-1][1] = end
        else:
            groups.append([h, end, kind])
    return [tuple(g) for g in groups]


def _entities_byte_range(data: bytes) -> tuple[int, int]:
    a = data.find(b"\nENTITIES\n")
    b = data.find(b"\nENDSEC\n", a + 1)
    return (a, b) if 0 <= a < b else (0, len(data))


def mutate(data: bytes, seed: int, drawing: str = "") -> Mutation:
    """One seeded random mutation of a DXF file's bytes."""
    rng = random.Random(seed)
    kind = rng.choices(KINDS, WEIGHTS)[0]
    if kind == "truncate":
        n = rng.randrange(len(data))
        return Mutation(seed, drawing, kind, f"cut at byte {n} of {len(data)}", data[:n])
    if kind == "flip":
        b = bytearray(data)
        lo, hi = _entities_byte_range(data)
        pos = [rng.randrange(lo, hi) if rng.random() < 0.5 else rng.randrange(len(b)) for _ in range(rng.randint(1, 8))]
        for p in pos:
            b[p] = rng.randrange(256)
        return Mutation(seed, drawing, kind, f"bytes at {pos}", bytes(b))
    text = data.decode("utf-8", "surrogateescape")
    if kind == "drop-line":
        lines = text.split("\n")
        i = rng.randrange(len(lines))
        detail = f"line {i + 1} ({lines[i]!r})"
        del lines[i]
        return Mutation(seed, drawing, kind, detail, "\n".join(lines).encode("utf-8", "surrogateescape"))
    tags = _tags(text)
    groups = _entity_groups(tags)
    assert groups, "the demo drawings have entities"
    if kind == "delete":
        chosen = sorted(rng.sample(range(len(groups)), min(rng.randint(1, 3), len(groups))), reverse=True)
        detail = ", ".join(f"{groups[g][2]} at tag {groups[g][0]}" for g in chosen)
        for g in chosen:
            a, b, _ = groups[g]
            del tags[a:b]
    elif kind == "attribute":
        values = [i for a, b, t in groups if t == "INSERT" for i in range(a, b)
                  if tags[i][0].strip() == "1"]
        picks = [rng.choice(values) for _ in range(rng.randint(1, 3))]
        new = [rng.choice(GARBAGE) for _ in picks]
        detail = ", ".join(f"tag {i} {tags[i][1]!r} -> {g!r}" for i, g in zip(picks, new))
        for i, g in zip(picks, new):
            tags[i] = (tags[i][0], g)
    elif kind == "value":
        i = rng.choice([i for a, b, _ in groups for i in range(a + 1, b) if tags[i][0].strip() != "0"])
        g = rng.choice(GARBAGE)
        detail = f"tag {i} (code {tags[i][0].strip()}) {tags[i][1]!r} -> {g!r}"
        tags[i] = (tags[i][0], g)
    elif kind == "duplicate":
        a, b, t = rng.choice(groups)
        dest = rng.choice(groups)[0]
        detail = f"{t} at tag {a} copied before tag {dest}"
        tags[dest:dest] = tags[a:b]
    elif kind == "layer":
        i = rng.choice([i for a, b, _ in groups for i in range(a, b) if tags[i][0].strip() == "8"])
        new = rng.choice(LAYERS)
        detail = f"tag {i} layer {tags[i][1]!r} -> {new!r}"
        tags[i] = (tags[i][0], new)
    elif kind == "block":
        i = rng.choice([i for a, b, t in groups if t == "INSERT" for i in range(a, b) if tags[i][0].strip() == "2"])
        new = rng.choice(SYMBOLS)
        detail = f"tag {i} block {tags[i][1]!r} -> {new!r}"
        tags[i] = (tags[i][0], new)
    else:  # coordinate
        i = rng.choice([i for a, b, _ in groups for i in range(a, b)
                        if tags[i][0].strip() in ("10", "20", "11", "21", "41", "42", "50")])
        try:
            v = float(tags[i][1])
        except ValueError:
            v = 1.0
        f = rng.choice(SCALES)
        detail = f"tag {i} (code {tags[i][0].strip()}) {tags[i][1]!r} scaled by {f:g}"
        tags[i] = (tags[i][0], repr((v or 1.0) * f))
    return Mutation(seed, drawing, kind, detail, _text(tags).encode("utf-8", "surrogateescape"))


def make_mutation(seed: int) -> Mutation:
    """The mutation of ``seed``: the drawing is chosen by the seed too."""
    drawing = DRAWINGS[seed % len(DRAWINGS)]
    return mutate((DEMO / drawing).read_bytes(), seed, drawing)


# ---------------------------------------------------------------------------
# running one mutation
# ---------------------------------------------------------------------------

#: failures in modules owned elsewhere, recognised by their message, with
#: the module to route them to; they make a chunk xfail (never pass silently)
FOREIGN: dict[str, str] = {}


def _run(args: list[str]) -> tuple[object, str, str]:
    from dxf2frame.cli import main

    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            rc: object = main(args)
        except BaseException as exc:  # noqa: BLE001 - the point of the test
            rc = f"escaped {type(exc).__name__}: {exc}"
    return rc, out.getvalue(), err.getvalue()


def _listing(folder: Path) -> list[str]:
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*"))


def run_mutation(mutation: Mutation, folder: Path, command: str) -> list[str]:
    """Run ``command`` on the mutated drawing in ``folder``; return the
    problems found (empty when the run behaved)."""
    folder.mkdir(parents=True)
    shutil.copy2(DEMO / "dxf2frame.toml", folder / "dxf2frame.toml")
    src = folder / mutation.drawing
    src.write_bytes(mutation.data)
    os.utime(src, ns=(1_400_000_000_000_000_000,) * 2)
    before = (src.read_bytes(), src.stat().st_mtime_ns, _listing(folder))
    out = folder / "out"
    args = ["check", str(src)] if command == "check" else ["solve", str(src), "--out", str(out), "--no-png"]
    rc, stdout, stderr = _run(args)
    problems = []
    if rc not in (0, 2, 3):
        problems.append(f"exit status {rc!r}")
    if "Traceback" in stderr or "Traceback" in stdout:
        problems.append("a traceback was printed")
    lines = stderr.strip().splitlines()
    if rc == 2 and (len(lines) != 1 or not lines[0].startswith("dxf2frame: error: ")):
        problems.append(f"bad input should give one error line, got {len(lines)}")
    written = [p for p in out.rglob("*") if p.is_file()] if out.exists() else []
    if rc != 0 and rc != 3 and written:
        problems.append(f"files left after exit {rc}: {[p.name for p in written]}")
    if rc in (0, 3) and command == "solve":
        hidden = [p.name for p in out.rglob(".*")]
        if hidden:
            problems.append(f"hidden files left: {hidden}")
        names = {p.name for p in written}
        stem = src.stem + "-results"
        expected = {f"{stem}.dxf", f"{stem}.json"} | ({f"{stem}.csv"} if rc == 0 else set())
        if not expected <= names:
            problems.append(f"outputs missing: {sorted(expected - names)}")
        elif rc in (0, 3):
            try:
                json.loads((out / f"{stem}.json").read_text(encoding="utf-8"))
            except ValueError as exc:
                problems.append(f"the report does not parse: {exc}")
    if (src.read_bytes(), src.stat().st_mtime_ns) != before[:2]:
        problems.append("the input file changed")
    if [p for p in _listing(folder) if not p.startswith("out")] != before[2]:
        problems.append("files appeared beside the input")
    if problems:
        tail = " | ".join(lines[-3:])
        return [f"{mutation} command={command} exit={rc!r}: {'; '.join(problems)} | stderr: {tail[:500]}"]
    return []


# ---------------------------------------------------------------------------
# the tests
# ---------------------------------------------------------------------------


def test_mutations_are_reproducible_and_cover_every_kind():
    a, b = make_mutation(BASE_SEED + 3), make_mutation(BASE_SEED + 3)
    assert a == b and a.data != (DEMO / a.drawing).read_bytes()
    # the kind is the first draw of the seeded generator (see mutate)
    kinds = {random.Random(BASE_SEED + i).choices(KINDS, WEIGHTS)[0] for i in range(COUNT)}
    assert kinds == set(KINDS)


@pytest.mark.parametrize("start", range(0, COUNT, CHUNK), ids=lambda s: f"mutations-{s}")
def test_mutated_demo_drawings(tmp_path, start):
    own, foreign = [], []
    for i in range(start, min(start + CHUNK, COUNT)):
        seed = BASE_SEED + i
        mutation = make_mutation(seed)
        command = "solve" if i % SOLVE_EVERY == 0 else "check"
        for problem in run_mutation(mutation, tmp_path / f"m{i}", command):
            route = next((m for sig, m in FOREIGN.items() if sig in problem), None)
            (foreign if route else own).append(problem + (f" [route to {route}]" if route else ""))
        shutil.rmtree(tmp_path / f"m{i}", ignore_errors=True)
    assert not own, "\n".join(own)
    if foreign:
        pytest.xfail("internal errors in other modules:\n" + "\n".join(foreign))


if __name__ == "__main__":  # reproduce one mutation: python tests/test_mutation.py SEED [OUT.dxf]
    s = int(sys.argv[1])
    m = make_mutation(s)
    target = Path(sys.argv[2]) if len(sys.argv) > 2 else Path(f"mutation-{s}.dxf")
    target.write_bytes(m.data)
    print(f"{m}\nwrote {target}")
