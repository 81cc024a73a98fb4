"""Second order and moving loads through the CLI, on drawings built here
(tests/dxf_builders.py).  Each number is checked against a closed form
named beside it; none is a value the code produced."""
from __future__ import annotations

import csv
import json
import math
from pathlib import Path

import ezdxf
import pytest

from dxf2frame.cli import main

from dxf_builders import add_load, add_member, add_polyline, add_support, new_drawing, save

E, I, A = 200e9, 8e-5, 5e-3   # Pa, m^4, m^2 (written below as "200 GPa", "8e7 mm**4", "5000 mm**2")
EI = E * I

SECTIONS = '''
[sections.default]
E = "200 GPa"
A = "5000 mm**2"
I = "8e7 mm**4"
'''
ONE_COMBINATION = '''
[combinations]
builtin = []
extra = ["1.0D"]
'''


def run(capsys, folder: Path, doc, settings: str, *args: str) -> tuple[int, str, str]:
    folder.mkdir(parents=True, exist_ok=True)
    path = save(doc, folder / "frame.dxf")
    (folder / "dxf2frame.toml").write_text(settings, encoding="utf-8")
    capsys.readouterr()
    rc = main(["solve", str(path), "--no-png", *args])
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


def report(folder: Path) -> dict:
    return json.loads((folder / "solved" / "frame-results.json").read_text(encoding="utf-8"))


def cantilever_column(P: str, H: str | None = None, L: float = 5.0):
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (0, L))
    add_support(msp, "fixed", (0, 0))
    add_load(msp, "force", (0, L), P=P, CASE="D")
    if H is not None:
        add_load(msp, "force", (0, L), 90, P=H, CASE="D")   # rotated 90 deg CCW: points along +X
    return doc


# -- second order ---------------------------------------------------------------


@pytest.fixture(params=["here", "second core"])
def check_where(request, monkeypatch):
    """The alpha_cr check run in the solving process, or in a forked child
    while the diagrams are drawn (dxf2frame.pipeline: from
    STABILITY_FORK_MEMBERS members; 0 here so that these small frames take
    that path): the outcome must be the same."""
    if request.param == "second core":
        import dxf2frame.pipeline as pipeline
        from dxf2frame.forked import can_fork

        if not can_fork():
            pytest.skip("needs fork, two CPUs and a single-threaded process")
        monkeypatch.setattr(pipeline, "STABILITY_FORK_MEMBERS", 0)
    return request.param


def test_cantilever_column_alpha_cr_is_the_euler_load(tmp_path, capsys, check_where):
    # Euler load of a cantilever column: Pcr = pi^2 EI / (4 L^2) (Euler;
    # Timoshenko and Gere, Theory of Elastic Stability, from memory)
    L, P = 5.0, 500e3
    rc, _, err = run(capsys, tmp_path, cantilever_column("500 kN", "2 kN"), SECTIONS + ONE_COMBINATION)
    assert rc == 0
    so = report(tmp_path)["second_order"]
    assert so["analysis"] == "check"          # the default
    row = so["combinations"][0]
    assert row["alpha_cr"] * P == pytest.approx(math.pi**2 * EI / (4 * L**2), rel=0.01)
    assert row["first_order_ok"] is False     # alpha_cr about 3.2 < 10 (common practice)
    assert "10" in so["criterion"] and "EN 1993-1-1" in so["criterion"]
    assert "second-order analysis is needed" in err
    out = ezdxf.readfile(tmp_path / "solved" / "frame-results.dxf")
    notes = " ".join(e.text for e in out.modelspace().query('MTEXT[layer=="RESULT-NOTES"]'))
    assert "second-order analysis is needed" in notes.replace("\\P", " ")
    assert len(out.modelspace().query('*[layer=="RESULT-BUCKLING"]')) >= 1
    assert any("second-order analysis is needed" in w for w in report(tmp_path)["warnings"])


def test_cantilever_column_p_delta_tip_moment_amplification(tmp_path, capsys):
    # cantilever with axial P and tip lateral H: base moment H L tan(kL)/(kL),
    # k = sqrt(P / EI) (Timoshenko and Gere, Theory of Elastic Stability,
    # from memory)
    L, P, H = 5.0, 500e3, 2e3
    settings = SECTIONS + ONE_COMBINATION + '[second_order]\nanalysis = "p-delta"\n'
    rc, _, _ = run(capsys, tmp_path, cantilever_column("500 kN", "2 kN"), settings, "--units", "kN,m")
    assert rc == 0
    rep = report(tmp_path)
    kL = math.sqrt(P / EI) * L
    exact = math.tan(kL) / kL
    storey = rep["second_order"]["combinations"][0]["storeys"][0]
    assert storey["moment_amplification"] == pytest.approx(exact, rel=0.01)
    second = rep["second_order"]["results"]
    assert [r["kind"] for r in second] == ["second-order"]
    assert {r["kind"] for r in rep["results"]} == {"case", "combination"}   # the schema's kinds only
    base = second[0]["reactions"][0]
    assert abs(base["m"]) == pytest.approx(H * L * exact / 1e3, rel=0.01)   # kN*m


def test_buckled_shape_of_a_column_line_is_one_polyline_true_to_the_euler_mode(tmp_path, capsys):
    # a cantilever column drawn as one polyline of four pieces (four
    # elements in a straight line): the buckled shape is one dashed
    # polyline, its sideways offset y(x) = d (1 - cos(pi x / 2L)) along
    # the height (the cantilever's Euler mode; Timoshenko and Gere, Theory
    # of Elastic Stability, from memory), the tip at 10 % of the frame's
    # size; the thinning keeps each drawn vertex within a few thousandths
    # of the tip movement of it
    L = 5.0
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    add_polyline(msp, [(0, 0), (0, 1.25), (0, 2.5), (0, 3.75), (0, L)])
    add_support(msp, "fixed", (0, 0))
    add_load(msp, "force", (0, L), P="500 kN", CASE="D")
    rc, _, _ = run(capsys, tmp_path, doc, SECTIONS + ONE_COMBINATION)
    assert rc == 0
    out = ezdxf.readfile(tmp_path / "solved" / "frame-results.dxf")
    shapes = out.modelspace().query('LWPOLYLINE[layer=="RESULT-BUCKLING"]')
    assert len(shapes) == 1
    xy = [(float(x), float(y)) for x, y in shapes[0].get_points("xy")]
    assert len(xy) >= 3
    assert xy[0] == pytest.approx((0.0, 0.0), abs=1e-9)
    tip = xy[-1][0]
    assert abs(tip) > 0
    for x, y in xy:
        assert x / tip == pytest.approx(1 - math.cos(math.pi * y / (2 * L)), abs=0.02)


def test_fixed_base_portal_with_rigid_beam_alpha_cr(tmp_path, capsys, check_where):
    # fixed base, rigid beam: each column fixed-guided, effective length
    # K = 1, Pcr = pi^2 EI / h^2 per column (sway-frame effective-length
    # chart with G_top = 0, G_base = 0; from memory)
    h, b = 5.0, 8.0
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (0, h))
    add_member(msp, (b, 0), (b, h))
    add_member(msp, (0, h), (b, h), layer="FRAME-BEAM")
    for x in (0, b):
        add_support(msp, "fixed", (x, 0))
        add_load(msp, "force", (x, h), P="200 kN", CASE="D")
    add_load(msp, "force", (0, h), 90, P="1 kN", CASE="D")
    settings = SECTIONS + '[sections."FRAME-BEAM"]\nI = "8e13 mm**4"\nA = "5e7 mm**2"\n' + ONE_COMBINATION
    rc, _, _ = run(capsys, tmp_path, doc, settings)
    assert rc == 0
    alpha = report(tmp_path)["second_order"]["combinations"][0]["alpha_cr"]
    assert alpha * 200e3 == pytest.approx(math.pi**2 * EI / h**2, rel=0.01)


def test_combination_over_the_critical_load_is_reported_as_buckling(tmp_path, capsys, check_where):
    # 2000 kN exceeds pi^2 EI / (4 L^2) = 1579 kN (Euler, from memory): the
    # combination buckles, exit 3, named; no results, the buckled shape drawn
    rc, _, err = run(capsys, tmp_path, cantilever_column("2000 kN", "2 kN"), SECTIONS + ONE_COMBINATION)
    assert rc == 3
    assert "buckles" in err and "combination D" in err
    rep = report(tmp_path)
    assert rep["results"] == [] and rep["second_order"]["buckled"] == "D"
    assert rep["second_order"]["combinations"][0]["buckles"] is True
    out = ezdxf.readfile(tmp_path / "solved" / "frame-results.dxf")
    assert len(out.modelspace().query('*[layer=="RESULT-BUCKLING"]')) >= 2
    notes = " ".join(e.text for e in out.modelspace().query('MTEXT[layer=="RESULT-NOTES"]'))
    assert "qualified engineer" in notes and "buckles" in notes
    assert not (tmp_path / "solved" / "frame-results.csv").exists()
    for layer in ("RESULT-MOMENT", "RESULT-SHEAR", "RESULT-AXIAL"):   # no diagrams of a buckling frame
        assert not out.modelspace().query(f'*[layer=="{layer}"]')


def test_second_order_texts_follow_the_drawing_text_height(tmp_path, capsys):
    # [drawing] text_height = "2.5 mm" at plot_scale 1:50 is 0.125 m on a drawing in metres
    # (plotted height times the scale: a drafter's rule, common practice); the buckled
    # shape's label, like the first-order texts, is written at that height, and so are the
    # notes of a frame that buckles
    drawing = '[drawing]\ntext_height = "2.5 mm"\nplot_scale = 50\n'
    rc, _, _ = run(capsys, tmp_path / "a", cantilever_column("500 kN", "2 kN"), SECTIONS + ONE_COMBINATION + drawing)
    assert rc == 0
    msp = ezdxf.readfile(tmp_path / "a" / "solved" / "frame-results.dxf").modelspace()
    label = msp.query('TEXT[layer=="RESULT-BUCKLING"]')
    assert len(label) == 1 and label[0].dxf.height == pytest.approx(0.125)
    assert {round(t.dxf.height, 9) for t in msp.query('TEXT[layer=="RESULT-MOMENT"]')} == {0.125}
    rc, _, _ = run(capsys, tmp_path / "b", cantilever_column("2000 kN", "2 kN"), SECTIONS + ONE_COMBINATION + drawing)
    assert rc == 3
    msp = ezdxf.readfile(tmp_path / "b" / "solved" / "frame-results.dxf").modelspace()
    assert {round(t.dxf.char_height, 9) for t in msp.query('MTEXT[layer=="RESULT-NOTES"]')} == {0.125}


def test_buckling_layer_is_remappable_and_check_can_be_off(tmp_path, capsys):
    settings = SECTIONS + ONE_COMBINATION + '[output_layers]\nbuckling = "CHK-BUCKLED"\n'
    rc, _, _ = run(capsys, tmp_path / "a", cantilever_column("500 kN", "2 kN"), settings)
    assert rc == 0
    out = ezdxf.readfile(tmp_path / "a" / "solved" / "frame-results.dxf")
    assert len(out.modelspace().query('*[layer=="CHK-BUCKLED"]')) >= 1
    assert not out.modelspace().query('*[layer=="RESULT-BUCKLING"]')
    rc, _, err = run(capsys, tmp_path / "b", cantilever_column("2000 kN"),
                     SECTIONS + ONE_COMBINATION + '[second_order]\nanalysis = "off"\n')
    assert rc == 0 and "second_order" in report(tmp_path / "b")
    assert report(tmp_path / "b")["second_order"]["combinations"] == []


@pytest.mark.parametrize("table", ['[second_order]\nanalysis = "exact"\n', '[second_order]\ntolerence = 1e-6\n',
                                   '[moving]\npath_layer = "FRAME"\n[[moving.vehicles]]\naxles = ["1 kN", "2 kN"]\n'])
def test_bad_second_order_or_moving_settings_are_bad_input(tmp_path, capsys, table):
    rc, _, err = run(capsys, tmp_path, cantilever_column("10 kN"), SECTIONS + table)
    assert rc == 2 and "dxf2frame.toml" in err
    assert not (tmp_path / "solved").exists()


# -- moving loads -----------------------------------------------------------------


def deck(L: float = 12.0, path_layer: str = "FRAME-DECK"):
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (L / 2, 0), layer="FRAME-DECK")
    add_member(msp, (L / 2, 0), (L, 0), layer="FRAME-DECK")
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (L, 0))
    add_load(msp, "udl", (L / 4, 0), W="1 kN/m", CASE="D")
    if path_layer != "FRAME-DECK":
        add_polyline(msp, [(L, 0), (0, 0)], layer=path_layer)
    return doc


def vehicles(path_layer: str, *axle_lines: str) -> str:
    return (f'[moving]\npath_layer = "{path_layer}"\nstep = "0.25 m"\n'
            + "".join(f"[[moving.vehicles]]\n{v}\n" for v in axle_lines))


@pytest.mark.parametrize("path_layer", ["FRAME-DECK", "PATH-RUNWAY"])
def test_single_moving_load_gives_pl_over_4_at_midspan(tmp_path, capsys, path_layer):
    # simple beam, concentrated load at centre: M_max = P L / 4 under the
    # load (AISC Steel Construction Manual, beam diagrams, simple beam with
    # a concentrated load at centre)
    L, P = 12.0, 80.0
    rc, _, _ = run(capsys, tmp_path, deck(L, path_layer),
                   vehicles(path_layer, 'name = "trolley"\naxles = ["80 kN"]'), "--units", "kN,m")
    assert rc == 0
    mv = report(tmp_path)["moving"]
    assert mv["path"]["length"] == pytest.approx(L, rel=1e-9)   # the drawn path
    crit = mv["vehicles"][0]["critical"]
    assert crit["value"] == pytest.approx(P * L / 4, rel=1e-9)
    assert crit["axle_points"][0] == pytest.approx([L / 2, 0.0], abs=1e-9)
    out = ezdxf.readfile(tmp_path / "solved" / "frame-results.dxf")
    assert out.modelspace().query('CIRCLE[layer=="RESULT-MOVING"]')


def test_two_axles_absolute_maximum_moment_classical_rule(tmp_path, capsys):
    # two equal axles P at spacing d on a simple span L: the absolute maximum
    # moment is under an axle placed so that midspan bisects the distance
    # between it and the resultant, M = (2P / L) (L/2 - d/4)^2 (classical
    # rule of bridge engineering texts, from memory)
    L, P, d = 12.0, 80.0, 2.0
    rc, _, _ = run(capsys, tmp_path, deck(L),
                   vehicles("FRAME-DECK", 'name = "bogie"\naxles = ["80 kN", "80 kN"]\nspacings = ["2 m"]'),
                   "--units", "kN,m")
    assert rc == 0
    crit = report(tmp_path)["moving"]["vehicles"][0]["critical"]
    assert crit["value"] == pytest.approx(2 * P / L * (L / 2 - d / 4) ** 2, rel=1e-9)


def test_influence_line_of_interior_reaction_mueller_breslau(tmp_path, capsys):
    # two equal spans L: by Mueller-Breslau and Maxwell's reciprocity the
    # influence line of the interior reaction is the deflected shape of the
    # simple span 2L under a central load, normalised: for a load at x <= L,
    # R_B = x (3 L^2 - x^2) / (2 L^3) (worked here from the simple-beam
    # deflection y = P x (3 l^2 - 4 x^2) / (48 EI), AISC beam diagrams)
    L = 6.0
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (2 * L, 0), layer="FRAME-DECK")
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (L, 0))
    add_support(msp, "roller", (2 * L, 0))
    add_load(msp, "udl", (L / 2, 0), W="1 kN/m", CASE="D")   # some load: a drawing with none has no results
    settings = SECTIONS + vehicles("FRAME-DECK", 'axles = ["10 kN"]')
    rc, _, err = run(capsys, tmp_path, doc, settings, "--influence", f"{L},0", "--units", "kN,m")
    assert rc == 0, err
    rows = list(csv.DictReader((tmp_path / "solved" / "frame-results-influence.csv").open(encoding="utf-8")))
    fy = {round(float(r["s"]), 6): float(r["value"]) for r in rows if r["quantity"] == "fy"}
    for x in (1.5, 3.0, 4.5, 6.0):
        assert fy[x] == pytest.approx(x * (3 * L**2 - x**2) / (2 * L**3), rel=1e-6)
    x = 9.0   # second span, by symmetry
    assert fy[x] == pytest.approx((2 * L - x) * (3 * L**2 - (2 * L - x) ** 2) / (2 * L**3), rel=1e-6)
    out = ezdxf.readfile(tmp_path / "solved" / "frame-results.dxf")
    assert out.modelspace().query('LWPOLYLINE[layer=="RESULT-INFLUENCE"]')


def test_influence_line_of_midspan_moment_and_its_absence_without_path(tmp_path, capsys):
    # simple span: influence line of M at a is x (L - a) / L for x <= a
    # (AISC beam diagrams, concentrated load at any point; Mueller-Breslau)
    L, a = 12.0, 3.0
    rc, _, _ = run(capsys, tmp_path / "a", deck(L), vehicles("FRAME-DECK", 'axles = ["1 kN"]'),
                   "--influence", f"{a},0")
    assert rc == 0
    rows = list(csv.DictReader((tmp_path / "a" / "solved" / "frame-results-influence.csv").open()))
    m = {round(float(r["s"]), 6): float(r["value"]) for r in rows if r["quantity"] == "M"}
    assert m[a] == pytest.approx(a * (L - a) / L, rel=1e-9)
    assert m[8.0] == pytest.approx(a * (L - 8.0) / L, rel=1e-9)
    # --influence without a path: bad input, nothing written
    rc, _, err = run(capsys, tmp_path / "b", deck(L), SECTIONS, "--influence", f"{a},0")
    assert rc == 2 and "path_layer" in err
    assert not (tmp_path / "b" / "solved").exists()


def test_a_path_without_vehicles_gives_influence_lines_alone(tmp_path, capsys):
    # simple span, influence line of M at a: x (L - a) / L for x <= a (AISC
    # beam diagrams, concentrated load at any point; Mueller-Breslau)
    L, a = 12.0, 3.0
    path_only = '[moving]\npath_layer = "FRAME-DECK"\nstep = "0.25 m"\n'
    rc, _, err = run(capsys, tmp_path / "a", deck(L), path_only, "--influence", f"{a},0")
    assert rc == 0, err
    rows = list(csv.DictReader((tmp_path / "a" / "solved" / "frame-results-influence.csv").open()))
    m = {round(float(r["s"]), 6): float(r["value"]) for r in rows if r["quantity"] == "M"}
    assert m[a] == pytest.approx(a * (L - a) / L, rel=1e-9)
    assert report(tmp_path / "a")["moving"]["vehicles"] == []
    # the path and nothing to move along it: said, not silently ignored
    rc, _, err = run(capsys, tmp_path / "b", deck(L), path_only)
    assert rc == 0 and "no vehicle" in err and "FRAME-DECK" in err
    rep = report(tmp_path / "b")
    assert "moving" not in rep and any("no vehicle" in w for w in rep["warnings"])


def test_a_vehicle_without_axles_is_bad_input(tmp_path, capsys):
    rc, _, err = run(capsys, tmp_path, deck(), SECTIONS + vehicles("FRAME-DECK", "axles = []\nspacings = []"))
    assert rc == 2 and "moving.vehicles[0].axles" in err and "at least one axle" in err
    assert not (tmp_path / "solved").exists()


def test_a_step_in_the_wrong_unit_is_refused_before_the_work(tmp_path, capsys):
    # "0.25 mm" for "0.25 m": 24,001 stations on the 6 m members of the deck;
    # the work on a member of the path grows as the square of its stations,
    # so the slip is refused (exit 2, nothing written), by solve and check alike
    settings = SECTIONS + vehicles("FRAME-DECK", 'axles = ["1 kN"]').replace('"0.25 m"', '"0.25 mm"')
    rc, _, err = run(capsys, tmp_path, deck(), settings)
    assert rc == 2 and "moving.step" in err and "24,001 stations" in err and "0.25 mm" in err
    assert not (tmp_path / "solved").exists()
    capsys.readouterr()
    assert main(["check", str(tmp_path / "frame.dxf")]) == 2
    assert "24,001 stations" in capsys.readouterr().err
    assert "a step of at least 0.00121 m" in err   # 6 m / 4,999 = 0.0012002 m, rounded up
    # within the limit: 4,801 stations on each member, solved
    settings = SECTIONS + vehicles("FRAME-DECK", 'axles = ["1 kN"]').replace('"0.25 m"', '"1.25 mm"')
    rc, _, err = run(capsys, tmp_path / "b", deck(), settings)
    assert rc == 0, err


def test_check_names_the_load_path_as_solve_reads_it(tmp_path, capsys):
    run(capsys, tmp_path, deck(), SECTIONS + vehicles("FRAME-DECK", 'name = "cart"\naxles = ["1 kN", "2 kN"]\n'
                                                                     'spacings = ["1 m"]'))
    capsys.readouterr()
    assert main(["check", str(tmp_path / "frame.dxf")]) == 0
    line = [t for t in capsys.readouterr().out.splitlines() if t.startswith("moving")]
    # 12 m at 0.25 m: stations 0, 0.25, ..., 12
    assert line == ["moving       path FRAME-DECK: 2 member(s), 12 m, step 0.25 m (49 stations); "
                    "vehicles: cart (2 axle(s))"]
    (tmp_path / "dxf2frame.toml").write_text(SECTIONS + vehicles("FRAME-DEK", 'axles = ["1 kN"]'), encoding="utf-8")
    assert main(["check", str(tmp_path / "frame.dxf")]) == 2
    assert "no member on the path layer 'FRAME-DEK'" in capsys.readouterr().err


def test_path_layer_that_is_not_a_chain_names_the_member(tmp_path, capsys):
    doc = deck()
    add_member(doc.modelspace(), (6, 0), (6, 3), layer="FRAME-DECK")   # a branch
    add_support(doc.modelspace(), "pin", (6, 3))
    rc, _, err = run(capsys, tmp_path, doc, SECTIONS + vehicles("FRAME-DECK", 'axles = ["1 kN"]'))
    assert rc == 2 and "one chain" in err and "FRAME-DECK" in err
    assert not (tmp_path / "solved").exists()


def test_footbridge_demo_solves_as_the_readme_says(tmp_path, capsys):
    # the README's demo command on a fresh copy of the demo (drawings/make_demo.py)
    import shutil
    import sys

    root = Path(__file__).resolve().parents[1]
    sys.path.insert(0, str(root / "drawings"))
    try:
        import make_demo
    finally:
        sys.path.remove(str(root / "drawings"))
    make_demo.build_footbridge().saveas(tmp_path / "kestrel-lane-footbridge.dxf")
    shutil.copy(root / "drawings" / "footbridge" / "dxf2frame.toml", tmp_path / "dxf2frame.toml")
    capsys.readouterr()
    rc = main(["solve", str(tmp_path / "kestrel-lane-footbridge.dxf"), "--no-png",
               "--influence", "14,4", "--influence", "7,4"])
    err = capsys.readouterr().err
    assert rc == 0, err
    rep = json.loads((tmp_path / "solved" / "kestrel-lane-footbridge-results.json").read_text(encoding="utf-8"))
    assert rep["second_order"]["analysis"] == "p-delta" and rep["second_order"]["results"]
    assert [v["name"] for v in rep["moving"]["vehicles"]] == ["maintenance buggy", "bin trolley"]
    assert (tmp_path / "solved" / "kestrel-lane-footbridge-results-influence.csv").is_file()
    assert "qualified engineer" in rep["moving"]["caution"] and "qualified engineer" in rep["caution"]


def test_path_polyline_off_the_members_names_its_handle(tmp_path, capsys):
    doc = deck(12.0, "PATH-RUNWAY")
    line = add_polyline(doc.modelspace(), [(0, 0), (14, 0)], layer="PATH-RUNWAY")
    for e in list(doc.modelspace().query('LWPOLYLINE[layer=="PATH-RUNWAY"]')):
        if e is not line:
            doc.modelspace().delete_entity(e)
    rc, _, err = run(capsys, tmp_path, doc, SECTIONS + vehicles("PATH-RUNWAY", 'axles = ["1 kN"]'))
    assert rc == 2 and f"#{line.dxf.handle}" in err and "PATH-RUNWAY" in err and "leaves the members" in err
    assert not (tmp_path / "solved").exists()


def test_settings_defaults_for_second_order_and_moving():
    from dxf2frame.settings import Settings

    s = Settings()
    assert s.second_order == "check" and s.moving_path_layer is None and s.moving_vehicles == ()
    assert s.output_layer("buckling") == "RESULT-BUCKLING"
