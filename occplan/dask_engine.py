"""The catalog search on a Dask cluster: one task per batch of catalog pieces.

The client computes the planet's path once (:func:`occplan.search.planet_path`) and the
pieces it can reach (:meth:`occplan.partitions.ParquetCatalog.select`); the pieces are
grouped into batches of about equal rows (:func:`batches`); each task reads its batch on a
worker and runs the prefilter, the screen and the batched refinement on it
(:func:`occplan.search.search_path`), exactly as the in-process engine does on the same
stars; the client gathers the candidates.  A catalog that is not partitioned (a StarTable)
is cut into pieces of ``chunk_rows`` rows and sent to the workers.

``scheduler`` is the address of a running scheduler (``tcp://host:8786``); without one a
``distributed.LocalCluster`` of ``workers`` single-threaded workers is started for the call.
"""

from __future__ import annotations

from .errors import InputError


def _task(batch, body, path, window, corrections, margin_km, kernels, column_map,
          allow_no_motion, chunk_rows):
    """Stages 1 and 2 over a batch of pieces (Piece or StarTable), refined together."""
    from .ephemeris import get_ephemeris
    from .partitions import Piece, read_piece
    from .search import search_path

    eph = get_ephemeris(tuple(str(k) for k in (kernels or [])))
    chunks = (chunk for piece in batch
              for chunk in (read_piece(piece, column_map, allow_no_motion, chunk_rows)
                            if isinstance(piece, Piece) else [piece]))
    return search_path(eph, body, path, chunks, window, corrections, margin_km, False, chunk_rows)


def batches(pieces, rows, n_workers: int, chunk_rows: int):
    """The pieces in contiguous batches of about equal rows: at least one batch a worker (two
    when there are enough pieces, so a slow batch does not idle the others), and no batch
    larger than ``chunk_rows`` rows unless a single piece is.  Small pieces refined one by
    one would pay the per-task and per-refinement overheads for a handful of stars each."""
    rows = [max(int(r), 1) for r in rows]
    total = sum(rows)
    n = max(min(2 * n_workers, len(pieces)), -(-total // chunk_rows), 1)
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
        futures = [client.submit(_task, b, big[0], big[1], window, corrections, margin_km,
                                 kernels, cmap, allow, chunk_rows, pure=False)
                   for b in batches(pieces, rows, n_workers, chunk_rows)]
        results = client.gather(futures)
    finally:
        if own:
            client.close()
            if cluster is not None:
                cluster.close()
    candidates, skipped, counts = [], [], [0, 0, 0]
    for cands, skip, cnt in results:
        candidates += cands
        skipped += skip
        counts = [a + b for a, b in zip(counts, cnt)]
    return candidates, skipped, tuple(counts)
