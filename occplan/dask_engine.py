"""The catalog search on a Dask cluster, in two rounds of tasks.

The client computes the planet's path once (:func:`occplan.search.planet_path`) and the
pieces it can reach (:meth:`occplan.partitions.ParquetCatalog.select`).  Round 1: the pieces,
grouped into batches of about equal rows (:func:`batches`), are read on the workers and
prefiltered and screened there (:func:`occplan.search.screen_chunks`); only the screened
stars come back.  Round 2: those stars, cut into groups of about equal refinement work
(:func:`occplan.search.split_runs`: the stars near the path cluster in a few pieces, so
batches of equal rows would leave one worker refining most of them), are refined on the
workers (:func:`occplan.search.refine_all`), exactly as the in-process engine refines the
same stars; the client gathers the candidates.  A catalog that is not partitioned (a
StarTable) is cut into pieces of ``chunk_rows`` rows and sent to the workers.

``scheduler`` is the address of a running scheduler (``tcp://host:8786``); without one a
``distributed.LocalCluster`` of ``workers`` single-threaded workers is started for the call.
"""

from __future__ import annotations

from .errors import InputError
from .search import check_stars, join_reached, split_runs


def _screen_task(batch, path, margin_km, column_map, allow_no_motion, chunk_rows):
    """Stage 1 over a batch of pieces (Piece or StarTable): the screened stars."""
    from .partitions import Piece, read_piece
    from .search import screen_chunks

    chunks = (chunk for piece in batch
              for chunk in (read_piece(piece, column_map, allow_no_motion, chunk_rows)
                            if isinstance(piece, Piece) else [piece]))
    return screen_chunks(path, chunks, margin_km, chunk_rows)


def _refine_task(part, body, path, window, corrections, margin_km, kernels):
    """Stage 2 for a group of screened stars: (candidates, skipped)."""
    from .ephemeris import get_ephemeris
    from .search import refine_all

    stars, rows, reach = part
    eph = get_ephemeris(tuple(str(k) for k in (kernels or [])))
    return refine_all(eph, body, path, stars, rows, reach, window, corrections, margin_km, False)


def _merge_screened(results):
    """The screened stars of all batches as one (stars, rows, Reach), rows counted across
    the batches in order; and the stars searched and prefiltered."""
    parts, n_searched, n_hits = [], 0, 0
    for stars, rows, reach, searched, hits in results:
        parts.append((stars, None if rows is None else rows + n_searched, reach))
        n_searched += searched
        n_hits += hits
    return (*join_reached(parts), n_searched, n_hits)


def batches(pieces, rows, n_workers: int, chunk_rows: int):
    """The pieces in contiguous batches of about equal rows (round 1's cost follows the
    rows): one batch a worker, more where a batch would exceed ``chunk_rows`` rows (unless a
    single piece does).  Small pieces one task each would pay the per-task overhead for a
    few hundred rows."""
    rows = [max(int(r), 1) for r in rows]
    total = sum(rows)
    n = max(min(n_workers, len(pieces)), -(-total // chunk_rows), 1)
    target = total / n
    out, cur, acc = [], [], 0
    for pc, r in zip(pieces, rows):
        if cur and acc + r / 2 > target * (len(out) + 1):
            out.append(cur)
            cur = []
        cur.append(pc)
        acc += r
    if cur:
        out.append(cur)
    return out


def client_for(scheduler: str | None = None, workers: int = 2, processes: bool = True):
    """A distributed Client: to ``scheduler``, or to a new LocalCluster (returned too)."""
    try:
        from distributed import Client, LocalCluster
    except ImportError:  # pragma: no cover - dask[distributed] is a dependency
        raise InputError("--engine dask needs the 'distributed' package: "
                         "pip install 'dask[distributed]'") from None
    if scheduler:
        try:
            return Client(scheduler, timeout="10s"), None
        except (OSError, TimeoutError) as exc:
            raise InputError(f"--scheduler {scheduler}: cannot connect ({exc})") from None
    cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=processes,
                           dashboard_address=None)
    return Client(cluster), cluster


def search_on_dask(body, path, source, window, corrections, margin_km, kernels=None,
                   scheduler: str | None = None, workers: int = 2, processes: bool = True,
                   chunk_rows: int = 250_000, client=None):
    """(candidates, skipped, (searched, prefiltered, screened)) over the pieces of
    ``source``: a list of :class:`occplan.partitions.Piece` with the catalog's column map,
    given as (pieces, column_map, allow_no_motion), or a StarTable."""
    own = client is None
    cluster = None
    if own:
        client, cluster = client_for(scheduler, workers, processes)
    try:
        if isinstance(source, tuple):
            pieces, cmap, allow = source
            rows = [pc.rows for pc in pieces]
        else:
            pieces = [source.subset(range(lo, min(lo + chunk_rows, len(source))))
                      for lo in range(0, len(source), chunk_rows)]
            rows = [len(pc) for pc in pieces]
            cmap, allow = {}, False
        n_workers = max(len(client.scheduler_info().get("workers", {})), 1)
        big = client.scatter([body, path], broadcast=True)
        # stage 1 per batch of pieces (its cost follows the rows) ...
        screened = client.gather([
            client.submit(_screen_task, b, big[1], margin_km, cmap, allow, chunk_rows,
                          pure=False)
            for b in batches(pieces, rows, n_workers, chunk_rows)])
        stars, star_rows, reach, n_searched, n_hits = _merge_screened(screened)
        results = []
        if stars is not None:
            check_stars(stars)
            # ... stage 2 on groups of equal refinement work (it follows the stars near the
            # path, which cluster in a few pieces)
            groups = split_runs(stars, star_rows, reach, 2 * n_workers)
            results = client.gather([
                client.submit(_refine_task, g, big[0], big[1], window, corrections, margin_km,
                              kernels, pure=False) for g in groups])
    finally:
        if own:
            client.close()
            if cluster is not None:
                cluster.close()
    candidates, skipped = [], []
    for cands, skip in results:
        candidates += cands
        skipped += skip
    n_screened = 0 if reach is None else int(reach.rows.size)
    return candidates, skipped, (n_searched, n_hits, n_screened)
