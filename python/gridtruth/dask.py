"""gridtruth on a Dask cluster: audits partition by partition on the workers (python3-dask, python3-distributed).

    from dask.distributed import Client
    import gridtruth.dask
    client = Client("tcp://scheduler:8786")        # or Client(LocalCluster(...)) on one machine
    results = gridtruth.dask.audit(["part-0.ndjson", "part-1.ndjson"], "EPSG:32615", tolerance="area=0.05%")
    totals = gridtruth.dask.summary(results, "EPSG:32615", tolerance="area=0.05%")

Features are independent, so the audit scales with the workers; each worker builds its Auditor once (per set of
options) and gives each of its threads a clone. The workers must be able to import gridtruth (installed there, or
on their PYTHONPATH).
"""
import threading

import dask
import dask.dataframe as dd

import gridtruth

_prototypes = {}
_lock = threading.Lock()
_local = threading.local()


def _key(options):
    return tuple(sorted((k, tuple(v) if isinstance(v, list) else v) for k, v in options.items()))


def worker_auditor(options):
    """This thread's auditor for ``options`` (Auditor's keyword arguments): the process builds one Auditor per set
    of options, each thread gets its own clone (PROJ objects are one thread's at a time)."""
    key = _key(options)
    mine = getattr(_local, "auditors", None)
    if mine is None:
        mine = _local.auditors = {}
    if key not in mine:
        with _lock:
            if key not in _prototypes:
                _prototypes[key] = gridtruth.Auditor(**options)
            mine[key] = _prototypes[key].clone()
    return mine[key]


def _combined(options):
    return options.get("height_m") is not None


def _audit_partition(frame, options, geometry, height_field, threads):
    core = worker_auditor(options)
    heights = frame[height_field].to_numpy(dtype=float) if height_field else None
    table = gridtruth._audit_table(core, frame[geometry].values, heights, [str(i) for i in frame.index], threads,
                                   256, _combined(options) or height_field is not None)
    table.index = frame.index
    return table


def _audit_path(path, options, reader, threads):
    core = worker_auditor(options)
    return gridtruth._frame(core._audit_file(path, reader["format"], reader["id_field"], reader["wkt_field"],
                                             reader["height_field"], threads, 256,
                                             _combined(options) or bool(reader["height_field"])))


def audit(data, target_crs, source_crs=None, geometry="geometry", height_field=None, threads=1, format="auto",
          id_field="", wkt_field="wkt", **options):
    """Audits, on the workers, a Dask DataFrame (its ``geometry`` column of shapely geometries, WKB or WKT; a
    GeoDataFrame's CRS is the source CRS unless ``source_crs`` is given) or a list of input files (GeoJSON,
    newline-delimited GeoJSON, CSV with WKT; one partition per file, read on the worker by gridtruth's readers
    with ``format``, ``id_field``, ``wkt_field``; the paths must be readable there). ``height_field`` names the
    column / property of ellipsoidal heights in metres; ``threads`` per task (1 suits one task per worker thread);
    further options as gridtruth.Auditor's.

    Returns a lazy Dask DataFrame with the columns of gridtruth.result_columns(), partition by partition in input
    order: rows equal to Auditor.audit_many()'s (and the command's) for the same features. For a DataFrame the
    index is the input's and ``id`` its text; for files ``id`` is as the command writes it.
    """
    if isinstance(data, (list, tuple)):
        options.update(target_crs=target_crs, source_crs=source_crs)
        gridtruth.Auditor(**options)  # fail here, on the client, for a bad CRS or option
        reader = {"format": format, "id_field": id_field, "wkt_field": wkt_field, "height_field": height_field or ""}
        meta = gridtruth.empty_table(_combined(options) or height_field is not None)
        parts = [dask.delayed(_audit_path)(str(p), options, reader, threads) for p in data]
        return dd.from_delayed(parts, meta=meta, verify_meta=False)
    if source_crs is None:
        crs = getattr(data, "crs", None)
        if crs is None:
            crs = getattr(data._meta, "crs", None)
        if crs is None:
            raise gridtruth.Error("the DataFrame has no CRS: give source_crs")
        source_crs = gridtruth.crs_definition(crs)
    options.update(target_crs=target_crs, source_crs=source_crs)
    gridtruth.Auditor(**options)
    meta = gridtruth.empty_table(_combined(options) or height_field is not None)
    meta.index = data._meta.index
    return data.map_partitions(_audit_partition, options, geometry, height_field, threads, meta=meta)


def _partial(frame):
    return gridtruth.partial_summary(frame)


def summary(results, target_crs=None, **options):
    """The run summary of audit()'s results, computed on the workers partition by partition and merged on the
    client: the layout of ``gridtruth audit --summary``'s JSON (counts, totals, worst features by |ppm|, exit
    status), equal to summary() of the whole table in one process. With ``target_crs`` (and the audit's options),
    the CRSs, transformation, edges and options are included too."""
    parts = dask.compute(*[dask.delayed(_partial)(p) for p in results.to_delayed()])
    offset = 0
    for part in parts:  # positions run on across partitions
        part["worst"] = [(w[0], w[1] + offset) + tuple(w[2:]) for w in part["worst"]]
        offset += part["read"]
    auditor = gridtruth.Auditor(target_crs, **options) if target_crs else None
    return gridtruth.merge_summaries(list(parts), auditor)
