"""``firnray demo``: every promised file, valid PNGs, and summary numbers equal to the library's.

The demo is run once (through the CLI's ``main``) into a temporary folder;
the tests then recompute its numbers from the same inputs with the public
calls (``find_rays``, ``shadow_boundary``, ``signal_budget``,
``simulate_arrivals``/``fit_vertex``, ``validate_reconstruction``) and compare
them with ``summary.json`` and with the rounded numbers in ``summary.md``.
These are consistency checks of the demo against the library, not checks
against an outside source.
"""

import contextlib
import io
import json
import os

import numpy as np
import pytest

import firnray
from firnray.faces import demo
from firnray.faces.cli import DEMO_COLUMN, build_parser, main

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo") / "tmp"
    stdout, stderr = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(stdout), contextlib.redirect_stderr(stderr):
        code = main(["demo", "--out", str(out)])
    assert code == 0, stderr.getvalue()
    with open(out / "summary.json", encoding="utf-8") as fh:
        doc = json.load(fh)
    with open(out / "summary.md", encoding="utf-8") as fh:
        md = fh.read()
    return {"out": out, "stdout": stdout.getvalue(), "stderr": stderr.getvalue(),
            "doc": doc, "md": md}


@pytest.fixture(scope="module")
def library():
    return firnray.load_profile("demo-dry-firn"), firnray.load_station("tallow-dome-demo")


def md_table(md, heading, index=0):
    """Rows (lists of cell strings, header first) of the index-th table under ``heading``."""
    section = md.split(f"\n## {heading}\n", 1)[1].split("\n## ", 1)[0]
    tables, current = [], []
    for line in section.splitlines():
        if line.startswith("|"):
            current.append(line)
        elif current:
            tables.append(current)
            current = []
    if current:
        tables.append(current)
    rows = [[c.strip() for c in line.strip("|").split("|")] for line in tables[index]]
    return [rows[0]] + rows[2:]          # drop the |---| line


def shown(value, spec):
    return "-" if value is None else format(value, spec)


def test_default_folder():
    assert build_parser().parse_args(["demo"]).out == "firnray-demo"


def test_every_promised_file_exists(run):
    out = run["out"]
    names = set(demo.FIGURES.values()) | {"summary.md", "summary.json"}
    assert names <= set(os.listdir(out))
    assert run["doc"]["figures"] == demo.FIGURES
    for name in demo.FIGURES.values():
        assert f"]({name})" in run["md"]          # every figure is linked from summary.md
    assert str(os.path.abspath(out)) in run["stdout"]   # it says where the files are
    assert "[6/7]" in run["stderr"] and "[7/7]" in run["stderr"]   # step lines


def test_figures_are_valid_pngs(run):
    import matplotlib.image
    for name in demo.FIGURES.values():
        path = run["out"] / name
        with open(path, "rb") as fh:
            assert fh.read(8) == PNG_SIGNATURE
        img = matplotlib.image.imread(path)
        assert img.ndim == 3 and img.shape[2] in (3, 4)
        assert img.shape[0] > 200 and img.shape[1] > 200
        assert float(np.ptp(img[..., :3])) > 0.5   # not a blank canvas


def test_dr_delays_equal_find_rays(run, library):
    prof, station = library
    doc = run["doc"]
    by = {(p["source"], p["antenna"]): p for p in doc["pairs"]}
    assert len(by) == len(doc["sources"]) * len(station)
    for name, src in doc["sources"].items():
        for ident, pos in zip(station.ids, station.positions):
            rays = firnray.find_rays(prof, src, pos)
            pair = by[(name, ident)]
            assert pair["rays"] == len(rays)
            assert pair["kinds"] == [r.kind for r in rays]
            if len(rays) == 2:
                # times of ~1e4 ns: agreement to 1e-6 ns between the batch and single solver
                assert pair["dr_delay_ns"] == pytest.approx(
                    rays[1].travel_time - rays[0].travel_time, abs=1e-6)
            else:
                assert pair["dr_delay_ns"] is None
    table = md_table(run["md"], "D/R delays")
    names = list(doc["sources"])
    assert table[0] == ["antenna"] + names
    assert [row[0] for row in table[1:]] == station.ids
    for row in table[1:]:
        assert row[1:] == [shown(by[(n, row[0])]["dr_delay_ns"], ".1f") for n in names]
    # the printed table shows the same cells
    for row in table[1:]:
        printed = next(line for line in run["stdout"].splitlines()
                       if line.startswith(row[0] + " "))
        assert printed.split()[1:] == row[1:]


def test_shadow_boundaries_equal_library(run, library):
    prof, station = library
    sh = run["doc"]["shadow"]
    grouped = sorted(a for band in sh["bands"] for a in band["antennas"])
    assert grouped == sorted(station.ids)
    table = md_table(run["md"], "Shadow zones")
    for band, row in zip(sh["bands"], table[1:]):
        z = float(np.mean([station.positions[station.index(a)][2] for a in band["antennas"]]))
        assert band["antenna_z_m"] == pytest.approx(z, abs=1e-12)
        expect = firnray.shadow_boundary(prof, z, np.array(sh["source_z_m"]))
        np.testing.assert_allclose(band["boundary_m"], expect, rtol=1e-12)
        assert row[1] == f"{z:.1f}"
        assert row[2:] == [shown(v, ".1f") for v in band["boundary_m"]]
    assert len(table) == len(sh["bands"]) + 1


def test_delay_table_equals_find_rays(run, library):
    prof, station = library
    dl = run["doc"]["delays"]
    z_ant = station.positions[station.index(dl["antenna"])][2]
    assert dl["antenna_z_m"] == z_ant
    table = md_table(run["md"], "D/R delay contours")
    assert table[0][1:] == [f"{x:.0f}" for x in dl["distance_m"]]
    for z, values, row in zip(dl["source_z_m"], dl["delay_ns"], table[1:]):
        for x, d, cell in zip(dl["distance_m"], values, row[1:]):
            rays = firnray.find_rays(prof, (0.0, z), (x, z_ant))
            assert d == pytest.approx(rays[1].travel_time - rays[0].travel_time, abs=1e-6)
            assert cell == f"{d:.2f}"


def test_budget_equals_signal_budget(run, library):
    prof, station = library
    bd = run["doc"]["budget"]
    src = run["doc"]["sources"][bd["source"]]
    rays = firnray.find_rays(prof, src, station.positions[station.index(bd["antenna"])])
    column = firnray.RobinTemperature(**DEMO_COLUMN)
    flat = firnray.ArrheniusAttenuation(column)
    scaled = firnray.ArrheniusAttenuation(column, frequency_scaling=demo.FREQUENCY_SCALING,
                                          reference_mhz=300.0)
    freqs = bd["table_frequencies_mhz"]
    assert freqs == list(demo.TABLE_FREQUENCIES_MHZ)
    idx = [bd["frequencies_mhz"].index(f) for f in freqs]
    assert [r["kind"] for r in bd["rays"]] == [r.kind for r in rays]
    table = md_table(run["md"], "Signal budget", index=1)
    for j, (ray, rec) in enumerate(zip(rays, bd["rays"])):
        b_flat = firnray.signal_budget(ray, freqs, flat)
        b_scaled = firnray.signal_budget(ray, freqs, scaled)
        np.testing.assert_allclose([rec["total_db_s"][k] for k in idx], b_flat.total_db_s,
                                   rtol=1e-12)
        np.testing.assert_allclose([rec["total_db_p"][k] for k in idx], b_flat.total_db_p,
                                   rtol=1e-12)
        np.testing.assert_allclose([rec["total_db_s_scaled"][k] for k in idx],
                                   b_scaled.total_db_s, rtol=1e-12)
        assert rec["spreading_db"] == pytest.approx(b_flat.spreading_db, rel=1e-12)
        assert rec["equivalent_distance_m"] == pytest.approx(b_flat.equivalent_distance,
                                                             rel=1e-12)
        for row, k in zip(table[1:], idx):
            assert row[1 + 2 * j] == f"{rec['total_db_s'][k]:.2f}"
            assert row[2 + 2 * j] == f"{rec['total_db_s_scaled'][k]:.2f}"


def test_vertex_round_trip_equals_library(run, library):
    prof, station = library
    vt = run["doc"]["vertex_round_trip"]
    true, fitted = np.array(vt["true_m"]), np.array(vt["fitted_m"])
    sigma = np.array(vt["sigma_m"], dtype=float)
    assert true.shape == fitted.shape == (vt["events"], 3)
    good = np.array(vt["success"]) & np.all(np.isfinite(sigma), axis=1)
    assert int(good.sum()) == vt["converged"]
    report = firnray.validate_reconstruction(true[good], fitted[good], sigma[good])
    np.testing.assert_allclose(vt["resolution_m"], report.resolution, rtol=1e-12)
    np.testing.assert_allclose(vt["pull_width"], report.pull_width, rtol=1e-12)
    np.testing.assert_allclose(vt["coverage"], report.coverage, rtol=1e-12)
    np.testing.assert_allclose(vt["bias_m"], report.bias, rtol=1e-12)
    # event 0 again, following the documented random draws
    box = vt["box_m"]
    rng = np.random.default_rng([vt["seed"], 0])
    vertex = np.array([rng.uniform(*box["x"]), rng.uniform(*box["y"]), rng.uniform(*box["z"])])
    np.testing.assert_allclose(vertex, true[0], rtol=1e-12)
    # simulate from the stored vertex (JSON keeps every bit): a vertex one ulp away
    # moves the fitted one by ~1e-6 m through the optimiser's stopping point
    rows = firnray.simulate_arrivals(prof, station, true[0], vt["emission_time_ns"],
                                     vt["timing_sigma_ns"], rng)
    fit = firnray.fit_vertex(prof, station, rows, grid=tuple(vt["seed_grid"]))
    np.testing.assert_allclose(fit.vertex, fitted[0], rtol=1e-9, atol=1e-9)
    assert fit.chi2 == pytest.approx(vt["chi2"][0], rel=1e-9)
    table = md_table(run["md"], "Vertex round trip")
    cells = {row[0]: row[1:] for row in table[1:]}
    assert cells["resolution [m]"] == [f"{v:.2f}" for v in vt["resolution_m"]]
    assert cells["pull width [1]"] == [f"{v:.2f}" for v in vt["pull_width"]]
    assert cells["coverage [1]"] == [f"{v:.3f}" for v in vt["coverage"]]


def test_unusable_out_folder_is_a_usage_error(tmp_path, capsys):
    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder")
    assert main(["demo", "--out", str(blocker)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("firnray: error: --out") and err.count("\n") == 1
