"""The package and the command line run the same library: on the same input and parameters they
must give the same numbers (exactly, where the command line prints full precision)."""

import json

import numpy as np

import beatfold
from conftest import DATA, DEMO

RECORD = DATA / "mitdb-excerpt" / "105d.hea"


def cloud(n=600, seed=4):
    """A seeded noisy circle in 3-D: a small, well-conditioned point cloud."""
    rng = np.random.default_rng(seed)
    a = rng.uniform(0, 2 * np.pi, n)
    return np.column_stack([np.cos(a), np.sin(a), 0.3 * np.sin(2 * a)]) + 0.02 * rng.normal(
        size=(n, 3)
    )


def write_points(path, X):
    # 17 significant digits: the CLI reads back exactly the float64 values the package gets.
    np.savetxt(path, X, delimiter=",", fmt="%.17g")


def test_diffusion_map_matches_embed(tmp_path, cli):
    X = cloud()
    pts = tmp_path / "points.csv"
    write_points(pts, X)
    coords_csv = tmp_path / "coords.csv"
    j = cli("embed", pts, "--components", 4, "--out", coords_csv)
    dm = beatfold.DiffusionMap(n_components=4).fit(X)
    assert dm.eigenvalues_.tolist() == j["eigenvalues"]
    assert dm.epsilon_ == j["epsilon"]
    # The coordinates file is printed with 9 significant digits.
    ref = np.loadtxt(coords_csv, delimiter=",")
    np.testing.assert_allclose(dm.embedding_, ref, rtol=1e-8, atol=1e-12)


def test_intrinsic_dimension_matches_dimension(tmp_path, cli):
    X = cloud(800, seed=5)
    pts = tmp_path / "points.csv"
    write_points(pts, X)
    j = cli("dimension", pts, "--bootstrap", 5, "--seed", 3)
    d = beatfold.intrinsic_dimension(X, bootstrap=5, random_state=3)
    assert d["estimates"] == j["estimates"]
    assert d["scale_curve"] == j["scale_curve"]
    assert (d["n"], d["ambient_dim"]) == (j["n"], j["ambient_dim"])


def test_beats_and_rhythm_match_the_cli(cli):
    rec = beatfold.read_record(RECORD)
    assert rec.fs_hz == 360.0 and rec.lead_names == ["MLII", "V1"]
    b = beatfold.detect_beats(rec.signal, rec.fs_hz)
    jb = cli("beats", RECORD)
    assert len(b["samples"]) == jb["n_beats"]
    assert b["agreement"] == jb["agreement"]
    jr = cli("rhythm", RECORD, "--window", "30s")
    r = beatfold.rhythm(
        b["rr_s"], b["labels"], b["samples"] / rec.fs_hz, window="30s"
    )
    for key in ("variability", "poincare", "sample_entropy", "windows"):
        assert r[key] == jr[key], key
    # From the file, the whole `rhythm --json` content, screen and verdict included.
    assert beatfold.rhythm(RECORD, window="30s") == jr


def test_analyze_matches_the_cli(tmp_path, cli):
    cli.plain("analyze", DEMO, "--out", tmp_path / "cli", "--quiet")
    ref = json.loads((tmp_path / "cli" / "summary.json").read_text())
    got = beatfold.analyze(DEMO, tmp_path / "py")
    written = json.loads((tmp_path / "py" / "summary.json").read_text())
    for s in (ref, got, written):
        s.pop("elapsed_s", None)
    assert got == written
    assert got == ref
    assert got["notice"] == beatfold.NOTICE
    assert (tmp_path / "py" / "report.html").exists()
