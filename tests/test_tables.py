"""Lookup tables: exact at the nodes, stated interpolation error, resume, refusal of
foreign or corrupted folders, and the same table from a process pool and a dask cluster."""

import concurrent.futures as cf
import json
import os
import signal
import subprocess
import sys
import time

import numpy as np
import pytest

import firnray
from firnray.studies import tables

PROF = firnray.load_profile("demo-dry-firn")
X = np.linspace(0.0, 1200.0, 25)
Z = np.linspace(-600.0, -10.0, 21)
ANTENNA = -80.0


def _build(folder, **kw):
    return firnray.build_table(PROF, ANTENNA, X, Z, folder, chunk_shape=(5, 7), **kw)


def _same(t1, t2):
    for key in t1.data:
        np.testing.assert_array_equal(t1.data[key], t2.data[key])


@pytest.fixture(scope="module")
def reference_table(tmp_path_factory):
    return _build(tmp_path_factory.mktemp("ref") / "table")


def test_nodes_are_exact_and_provenance_complete(reference_table):
    t = reference_table
    xx, zz = np.meshgrid(X, Z)
    src = np.column_stack([np.zeros(xx.size), zz.ravel()])
    rcv = np.column_stack([xx.ravel(), np.full(xx.size, ANTENNA)])
    exact = firnray.find_rays_many(PROF, src, rcv)
    np.testing.assert_array_equal(t.data["travel_time"][:, :, 0].ravel(), exact.travel_time[:, 0])
    np.testing.assert_array_equal(t.data["count"].ravel(), exact.count)
    at_nodes = t.interpolate(xx, zz, "travel_time", 0)
    np.testing.assert_allclose(at_nodes, t.data["travel_time"][:, :, 0], rtol=1e-14)
    rec = t.provenance
    for key in ("firnray_version", "created_utc", "profile", "grid", "chunk_shape", "units"):
        assert key in rec
    assert rec["profile"]["info"]["source"]["citation"]
    assert t.profile == PROF


def test_interpolation_error_is_measured_between_nodes(reference_table):
    rep = reference_table.interpolation_error(n_points=500, seed=3)
    err = rep[("travel_time", 0)]
    assert err["points"] > 300 and np.isfinite(err["max"])
    # bilinear on a 50 m x 29.5 m grid: the error is second order in the spacing;
    # it is largest where the first arrival changes kind (direct horizon)
    assert err["median"] < 1.0 and err["max"] >= err["p99"] >= err["median"]
    finer = firnray.build_table(PROF, ANTENNA, np.linspace(0.0, 1200.0, 49),
                                np.linspace(-600.0, -10.0, 41),
                                os.path.join(os.path.dirname(reference_table.folder), "finer"), chunk_shape=(20, 20))
    fine_err = finer.interpolation_error(n_points=500, seed=3)[("travel_time", 0)]
    assert fine_err["median"] < 0.5 * err["median"]
    assert np.isnan(reference_table.interpolate(5000.0, -100.0))


class FailingAfter(cf.Executor):
    """Runs tasks inline; the (k+1)-th raises, as a crash in the middle of a run would."""

    def __init__(self, k):
        self.k = k
        self.done = 0

    def submit(self, fn, *args):
        fut = cf.Future()
        if self.done >= self.k:
            fut.set_exception(RuntimeError("worker lost"))
        else:
            fut.set_result(fn(*args))
        self.done += 1
        return fut


def test_interrupted_run_resumes_to_identical_table(tmp_path, reference_table):
    folder = tmp_path / "t"
    with pytest.raises(RuntimeError, match="worker lost"):
        _build(folder, executor=FailingAfter(4))
    assert len(os.listdir(folder / "chunks")) == 4
    with pytest.raises(firnray.TableError, match="incomplete"):
        firnray.open_table(folder)
    _same(_build(folder), reference_table)


KILL_SCRIPT = """
import sys, time, numpy as np, firnray
prof = firnray.load_profile("demo-dry-firn")
firnray.build_table(prof, {antenna}, np.linspace(0.0, 1200.0, 25), np.linspace(-600.0, -10.0, 21),
                    sys.argv[1], chunk_shape=(5, 7), on_chunk=lambda iz, ix: time.sleep(0.3))
"""


def test_kill_9_loses_nothing(tmp_path, reference_table):
    folder = tmp_path / "killed"
    script = tmp_path / "build.py"
    script.write_text(KILL_SCRIPT.format(antenna=ANTENNA))
    proc = subprocess.Popen([sys.executable, str(script), str(folder)])
    chunks = folder / "chunks"
    deadline = time.time() + 120
    while time.time() < deadline:
        if chunks.exists() and len([f for f in os.listdir(chunks) if f.endswith(".npz")
                                    and not f.startswith(".tmp")]) >= 3:
            break
        time.sleep(0.05)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    done = [f for f in os.listdir(chunks) if f.endswith(".npz") and not f.startswith(".tmp")]
    assert 3 <= len(done) < 25  # killed in the middle (25 chunks in all)
    _same(_build(folder), reference_table)


def test_refuses_foreign_corrupted_and_different(tmp_path, reference_table):
    with pytest.raises(firnray.TableError, match="not a firnray lookup table"):
        firnray.open_table(tmp_path)
    (tmp_path / "manifest.json").write_text(json.dumps({"format": "something-else"}))
    with pytest.raises(firnray.TableError, match="not a firnray lookup table"):
        firnray.open_table(tmp_path)
    folder = tmp_path / "t"
    _build(folder)
    with pytest.raises(firnray.TableError, match="different table"):
        firnray.build_table(PROF, -90.0, X, Z, folder, chunk_shape=(5, 7))
    chunk = folder / "chunks" / "0_0.npz"
    chunk.write_bytes(chunk.read_bytes()[:100])
    with pytest.raises(firnray.TableError, match="corrupted chunk"):
        firnray.open_table(folder)
    manifest = folder / "manifest.json"
    rec = json.loads(manifest.read_text())
    rec["antenna_z"] = -50.0
    manifest.write_text(json.dumps(rec))
    with pytest.raises(firnray.TableError, match="fingerprint"):
        firnray.open_table(folder)


def test_grid_checks():
    with pytest.raises(ValueError, match="evenly spaced"):
        firnray.build_table(PROF, ANTENNA, [0.0, 1.0, 5.0], Z, "/nonexistent/x")
    with pytest.raises(ValueError, match="chunk_shape"):
        firnray.build_table(PROF, ANTENNA, X, Z, "/nonexistent/x", chunk_shape=(0, 3))


def test_process_pool_gives_identical_table(tmp_path, reference_table):
    _same(_build(tmp_path / "p", executor="processes", max_workers=2), reference_table)


def test_dask_local_cluster_gives_identical_table(tmp_path, reference_table):
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        with distributed.Client(cluster) as client:
            table = _build(tmp_path / "d", executor=client.get_executor())
    _same(table, reference_table)
