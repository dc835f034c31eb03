"""Partitioned Parquet catalogs and the Dask engine against the in-memory search.

Reference: the same invented stars searched from memory (a StarTable of every row, no
pruning, in-process).  The partitioned catalog is written by
``benchmarks/make_partitioned_catalog.py`` (seeded); HEALPix pixels are computed there by
astropy-healpix and Gaia's convention source_id // 2**35 = nested level-12 pixel (Gaia DR3
documentation, the source_id datamodel entry).
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

import numpy as np
import pytest

from occplan.bodies import get_body
from occplan.catalogs import StarTable
from occplan.ephemeris import parse_utc, tdb_s_of
from occplan.partitions import ParquetCatalog, read_piece
from occplan.search import search_candidates

START, DAYS = "2027-06-01T00:00:00Z", 12.0
SCRIPT = Path(__file__).resolve().parents[1] / "benchmarks" / "make_partitioned_catalog.py"


def _script():
    spec = importlib.util.spec_from_file_location("make_partitioned_catalog", SCRIPT)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


@pytest.fixture(scope="module")
def catalog(tmp_path_factory):
    mod = _script()
    cols = mod.synthetic_stars(20_000, 120, "saturn", START, DAYS, seed=5)
    root = tmp_path_factory.mktemp("cat")
    mod.write_partitioned(root / "folders", cols, level=3)
    import pyarrow as pa
    import pyarrow.parquet as pq

    (root / "single").mkdir()
    pq.write_table(pa.table(cols), root / "single" / "gaia.parquet", row_group_size=400)
    t0 = tdb_s_of(parse_utc(START))
    window = (t0, t0 + DAYS * 86400.0)
    body = get_body("saturn")
    whole = ParquetCatalog(root / "folders")
    table = _concat([c for pc in whole.pieces for c in whole.read(pc)])
    ref, skipped, _ = search_candidates(body, table, window)
    assert not skipped and len(ref) >= 50
    return root, body, window, ref


def _concat(parts):
    from occplan.search import concat_tables

    return concat_tables(parts)


def _key(cands):
    return sorted((c.star_id, c.closest_approach_s, c.min_ring_radius_km, c.sky_distance_km)
                  for c in cands)


def _same(a, b):
    ka, kb = _key(a), _key(b)
    assert [x[0] for x in ka] == [x[0] for x in kb]
    for x, y in zip(ka, kb):
        assert abs(x[1] - y[1]) < 1e-3 and abs(x[3] - y[3]) < 1e-3  # s, km
        assert (np.isnan(x[2]) and np.isnan(y[2])) or abs(x[2] - y[2]) < 1e-3


def test_folder_partitions_pruned_same_candidates(catalog):
    root, body, window, ref = catalog
    cat = ParquetCatalog(root / "folders")
    got, skipped, info = search_candidates(body, cat, window)
    _same(got, ref)
    part = info["partitions"]
    # 12 days of Saturn's path touch a handful of the 768 level-3 pixels
    assert part["partitions_read"] < 0.02 * part["partitions"]
    assert part["partitions"] > 300


def test_gaia_source_id_row_groups_pruned_same_candidates(catalog):
    root, body, window, ref = catalog
    cat = ParquetCatalog(root / "single" / "gaia.parquet")
    assert all(pc.level == 12 for pc in cat.pieces)
    got, _, info = search_candidates(body, cat, window)
    _same(got, ref)
    assert info["partitions"]["partitions_read"] < 0.1 * info["partitions"]["partitions"]


def test_read_piece_keeps_gaia_ids(catalog):
    root, *_ = catalog
    cat = ParquetCatalog(root / "single" / "gaia.parquet")
    table = next(read_piece(cat.pieces[0], {}, False))
    assert isinstance(table, StarTable) and len(table) == 400
    assert int(table.source_id[0]) // 2 ** 35 == cat.pieces[0].pixel[0]


def test_dask_engine_star_for_star(catalog):
    """The Dask engine on a LocalCluster (threads: CI speed) against the in-process one."""
    pytest.importorskip("distributed")
    root, body, window, ref = catalog
    got, skipped, info = search_candidates(body, ParquetCatalog(root / "folders"), window,
                                           engine="dask", workers=2, dask_processes=False)
    assert not skipped
    _same(got, ref)


def test_cli_find_on_a_parquet_folder(catalog):
    import json

    from typer.testing import CliRunner

    from occplan.cli.main import build_app

    root, body, window, ref = catalog
    args = ["find", "--catalog", str(root / "folders"), "--start", START,
            "--end", "2027-06-13T00:00:00Z", "--geocentre", "--no-zones", "--format", "json"]
    res = CliRunner().invoke(build_app(), args)
    assert res.exit_code == 0, res.output
    out = json.loads(res.stdout)
    assert out["meta"]["search"]["partitions"]["partitions_read"] >= 1
    assert {r["star_id"] for r in out["rows"]} <= {c.star_id for c in ref}
    bad = CliRunner().invoke(build_app(), args + ["--engine", "spark"])
    assert bad.exit_code == 2 and "--engine" in bad.output


def test_a_parquet_piece_gets_the_catalog_rules_and_gaia_photometry():
    """Partition pieces go through the same table-to-stars path as files: Gaia G and BP-RP
    become V..Ks (Riello et al. 2021 relations), errors are kept, rows without motion are
    skipped."""
    import pyarrow as pa

    from occplan.partitions import _stars

    batch = pa.RecordBatch.from_pydict({
        "source_id": pa.array([1, 2, 3], pa.int64()), "ra": [10.0, 11.0, 12.0],
        "dec": [5.0, 6.0, 7.0], "pmra": [1.0, None, 0.5], "pmdec": [0.0, 0.0, 0.1],
        "parallax": [2.0, 1.0, 0.3], "parallax_error": [0.05, 0.05, 0.05],
        "ra_error": [0.02, 0.02, 0.02], "phot_g_mean_mag": [11.0, 12.0, 13.0],
        "bp_rp": [1.0, 1.2, 0.8]})
    stars = _stars(batch, {}, False)
    assert list(stars.source_id) == ["1", "3"]  # star 2 has no proper motion
    s = stars.star(0)
    assert s.extra["photometry"]["V"]["source"].startswith("Gaia")
    assert s.vmag is not None and s.errors["parallax_error"] == 0.05 and "ra_error" in s.errors


def test_folder_partitions_out_of_reach_are_never_opened(catalog, tmp_path):
    """A folder catalog names its pixels: files the path cannot reach are not opened (an
    unreadable one out of reach is harmless), a selected unreadable one is a clear error."""
    import shutil

    from occplan.errors import DataFileError

    root, body, window, ref = catalog
    cat_dir = tmp_path / "folders"
    shutil.copytree(root / "folders", cat_dir)
    cat = ParquetCatalog(cat_dir)
    assert cat.rows is None
    chosen = {pc.path for pc in cat.select(*_reach(body, window))}
    far = next(pc.path for pc in cat.pieces if pc.path not in chosen)
    Path(far).write_bytes(b"not parquet")
    got, _, info = search_candidates(body, ParquetCatalog(cat_dir), window)
    _same(got, ref)
    assert info["partitions"]["rows"] is None and info["partitions"]["rows_read"] > 0
    Path(sorted(chosen)[0]).write_bytes(b"not parquet")
    with pytest.raises(DataFileError, match="cannot be read as Parquet"):
        search_candidates(body, ParquetCatalog(cat_dir), window)


def _reach(body, window):
    from occplan.ephemeris import get_ephemeris
    from occplan.search import planet_path, search_radius_rad

    path = planet_path(get_ephemeris(), body, window[0] - 86400.0, window[1] + 86400.0, 3600.0,
                       body.outer_ring_km + 7378.137)
    return path.unit, search_radius_rad(path), 11.0


def test_dask_batches_cover_every_piece_in_order_with_balanced_rows():
    """Pieces grouped for Dask tasks: all kept, in order, one batch per worker (more when a
    batch would pass the chunk size), none much larger than an even share (common practice
    for task sizing)."""
    from occplan.dask_engine import batches

    rng = np.random.default_rng(3)
    rows = rng.integers(1, 400, 59).tolist()
    pieces = list(range(59))
    out = batches(pieces, rows, 2, 250_000)
    assert [p for b in out for p in b] == pieces
    assert len(out) == 2
    share = sum(rows) / len(out)
    assert max(sum(rows[p] for p in b) for b in out) < share + max(rows)
    big = batches(pieces, [100_000] * 59, 2, 250_000)
    assert len(big) >= 59 * 100_000 // 250_000 and max(len(b) for b in big) <= 3
    assert batches([7], [5], 4, 250_000) == [[7]]


def test_refinement_groups_split_the_work_evenly_and_lose_nothing():
    """Screened stars cut into groups for round 2: every star and run exactly once, in
    order, each group's runs pointing at its own stars, and the path nodes to refine shared
    within one star's worth of an even split (common practice for load balancing)."""
    from occplan.search import Reach, split_runs

    rng = np.random.default_rng(4)
    n = 300
    stars = _tiny_table(n)
    per_star = rng.integers(1, 4, n)
    run_star = np.repeat(np.arange(n), per_star)
    first = rng.integers(0, 8000, run_star.size)
    last = first + np.where(run_star < 40, 60, 3)  # the first stars hold most of the work
    reach = Reach(np.arange(n), run_star, first, last)
    rows = np.arange(n) * 10
    groups = split_runs(stars, rows, reach, 4)
    assert 2 <= len(groups) <= 4
    assert np.array_equal(np.concatenate([g[1] for g in groups]), rows)
    got = np.concatenate([g[2].run_star + sum(len(h[1]) for h in groups[:k])
                          for k, g in enumerate(groups)])
    assert np.array_equal(got, run_star)
    work = [float(np.sum(g[2].run_last - g[2].run_first + 1)) for g in groups]
    biggest = float(np.max(np.bincount(run_star, weights=last - first + 1.0)))
    assert max(work) <= sum(work) / len(groups) + biggest
    for st, rw, rc in groups:
        assert len(st) == len(rw) and rc.run_star.max() < len(rw)


def _tiny_table(n):
    nan = np.full(n, np.nan)
    return StarTable(source_id=np.arange(n).astype(str).astype(object),
                     ra_deg=np.linspace(0, 10, n), dec_deg=np.zeros(n), pm_ra_mas_yr=np.zeros(n),
                     pm_dec_mas_yr=np.zeros(n), parallax_mas=np.zeros(n), rv_km_s=np.zeros(n),
                     epoch_jd_tt=np.full(n, 2457389.0), vmag=nan, kmag=nan, gmag=nan)
