"""gridtruth for Python: how wrong are lengths and areas measured on a map grid?

Per-feature error budgets from gridtruth's C++ library (GeographicLib truth, PROJ grids). Results come back as
pandas DataFrames with exactly the CSV columns of ``gridtruth audit`` (same names, units and row order)::

    import gridtruth
    auditor = gridtruth.Auditor("EPSG:32615", tolerance="area=0.05%")
    table = auditor.audit_many(shapely_polygons, threads=2)
    table = gridtruth.audit_frame(geodataframe, "EPSG:5070")     # source CRS from gdf.crs, joined on the index

Errors of set-up (unknown CRS, bad option) raise gridtruth.Error, a ValueError carrying the library's message and
``code``; a bad feature never raises: it becomes a row with status ``invalid`` and a message.
"""
import functools
import math

import numpy as np
import pandas as pd

from . import _core
from ._core import AuditResult, Budget, Distortion, Error, __version__

__all__ = ["Auditor", "AuditResult", "Budget", "Distortion", "Error", "audit_frame", "rank", "tailor", "summary",
           "result_columns", "__version__"]


def result_columns(combined_factor=False, bounds=False):
    """The names of the result columns, in order (``gridtruth audit``'s CSV header; ``combined_factor`` last when
    asked for, then with ``bounds`` the 14 bound columns of ``--bounds``)."""
    return [name for name, _ in _core.result_columns(combined_factor, bounds)]


def _tolerance_text(tolerance):
    if tolerance is None:
        return ""
    if isinstance(tolerance, str):
        return tolerance
    return ",".join(tolerance)


class Auditor(_core.Auditor):
    """Audits features from a source CRS against a projected target CRS (gridtruth::Auditor).

    Arguments carry the C++ options' names (AuditOptions): ``target_crs`` and ``source_crs`` (any definition PROJ
    accepts; source default EPSG:4326, longitude-latitude), ``edges`` ("geodesic", "rhumb" or "straight-in=CRS";
    None: geodesic for a geographic source, straight in its plane for a projected one), ``tolerance`` (the
    command's spec, "area=0.05%,length=1:2000", or a list of specs), ``height_m`` (ellipsoidal height in metres;
    given, even 0, the results carry ``combined_factor``), ``densify_tolerance_m``, ``area_of_use_margin_deg``,
    ``closed_form_short_edges``. Raises gridtruth.Error (a ValueError) naming the CRS or option at fault.

    Building resolves both CRSs (up to a few hundred milliseconds): build once, audit many. An Auditor pickles (its
    options; it is rebuilt where it is unpickled), so it travels to Dask workers. One thread at a time per Auditor;
    audit_many() runs its own worker threads, each with a clone; clone() gives the compiled core auditor
    (audit(), no DataFrames) for another thread, as gridtruth.dask does per worker thread.
    """

    def __init__(self, target_crs, source_crs=None, edges=None, tolerance=None, height_m=None,
                 densify_tolerance_m=0.001, area_of_use_margin_deg=5.0, closed_form_short_edges=True):
        self._kwargs = dict(target_crs=target_crs, source_crs=source_crs, edges=edges, tolerance=tolerance,
                            height_m=height_m, densify_tolerance_m=densify_tolerance_m,
                            area_of_use_margin_deg=area_of_use_margin_deg,
                            closed_form_short_edges=closed_form_short_edges)
        super().__init__(target_crs, source_crs, edges, _tolerance_text(tolerance),
                         0.0 if height_m is None else float(height_m), float(densify_tolerance_m),
                         float(area_of_use_margin_deg), bool(closed_form_short_edges))

    def __reduce__(self):
        return (functools.partial(Auditor, **self._kwargs), ())

    @property
    def options(self):
        """The arguments the auditor was built with (a dict)."""
        return dict(self._kwargs)

    @property
    def with_heights(self):
        """True when a height was given: the results then carry ``combined_factor``."""
        return self._kwargs["height_m"] is not None

    def audit_many(self, geometries, heights=None, threads=None, ids=None, batch_features=256, bounds=False):
        """Audits a sequence (list, numpy array, GeoSeries) of geometries on ``threads`` worker threads (None: every
        core), with the GIL released, each worker with a clone of this auditor.

        Geometries are shapely objects, WKB bytes, WKT text or GeoJSON-like mappings; None or anything unreadable
        becomes an ``invalid`` row with the reason. Shapely 1.x geometries are read straight from GEOS with the GIL
        released (when shapely uses the libgeos_c the module links; else through their WKB): do not change them in
        place from another thread meanwhile. ``heights``: one ellipsoidal height in metres per geometry (None
        or NaN make that feature invalid). ``ids``: the ``id`` column (default: the 1-based position as text).

        Returns a pandas DataFrame with the columns of result_columns(): one row per geometry, in order. Text cells
        that do not apply are "", numbers NaN; ``vertices`` is a nullable integer. With ``bounds`` the 14 bound
        columns of ``gridtruth audit --bounds`` come last (how far each figure may be from its exact value; NaN where
        none applies). Every thread count gives the same results, equal to the command's to the last bit.
        """
        return _audit_table(self, geometries, heights, ids, threads, batch_features,
                            self.with_heights or heights is not None, bounds)


def _frame(table):
    """A DataFrame of the core's result table, in the columns' order."""
    frame = pd.DataFrame(table, copy=False)
    if "vertices" in frame:
        frame["vertices"] = frame["vertices"].astype("Int64")
    return frame


def _audit_table(core_auditor, geometries, heights, ids, threads, batch_features, combined_factor, bounds=False):
    if heights is not None:
        heights = np.asarray(heights, dtype=float)
    return _frame(core_auditor._audit_table(geometries, heights, ids, 0 if threads is None else int(threads),
                                            int(batch_features), bool(combined_factor), bool(bounds)))


def empty_table(combined_factor=False, bounds=False):
    """An empty result DataFrame with the columns and dtypes audit_many() returns (Dask's ``meta``)."""
    columns = {}
    for name, kind in _core.result_columns(combined_factor, bounds):
        columns[name] = pd.Series([], dtype={"text": object, "count": "Int64", "number": float}[kind])
    return pd.DataFrame(columns)


def crs_definition(crs):
    """What gridtruth takes for a pyproj CRS (``gdf.crs``): "AUTHORITY:CODE" when it has one, else its WKT2."""
    authority = crs.to_authority()
    if authority:
        return f"{authority[0]}:{authority[1]}"
    return crs.to_wkt()


def _source_of(frame, source_crs):
    if source_crs is not None:
        return source_crs
    crs = getattr(frame, "crs", None)
    if crs is None:
        raise Error("the GeoDataFrame has no CRS (gdf.crs): give source_crs")
    return crs_definition(crs)


def audit_frame(gdf, target_crs, source_crs=None, height_field=None, threads=None, join=True, bounds=False,
                **options):
    """Audits every geometry of a GeoPandas GeoDataFrame on the grid of ``target_crs``. The source CRS is
    ``gdf.crs`` (unless ``source_crs`` is given); ``height_field`` names a column of ellipsoidal heights in metres;
    ``bounds`` adds the bound columns (as audit_many()); further options as Auditor's. The ``id`` column is the
    index as text. Returns ``gdf.join(results)`` (the results alone, on gdf's index, with ``join=False``)."""
    auditor = Auditor(target_crs, source_crs=_source_of(gdf, source_crs), **options)
    heights = gdf[height_field].to_numpy(dtype=float) if height_field else None
    table = auditor.audit_many(gdf.geometry.values, heights=heights, threads=threads,
                               ids=[str(i) for i in gdf.index], bounds=bounds)
    table.index = gdf.index
    return gdf.join(table, rsuffix="_audit") if join else table


def _geometries_of(data, source_crs, height_field):
    """(geometries, heights, source CRS) of a GeoDataFrame / GeoSeries or a plain sequence."""
    if hasattr(data, "geometry") or hasattr(data, "crs"):
        source_crs = _source_of(data, source_crs)
        geometries = data.geometry.values if hasattr(data, "geometry") else data.values
    else:
        geometries = data
    heights = None
    if height_field is not None:
        heights = data[height_field].to_numpy(dtype=float)
    return geometries, heights, source_crs


def rank(data, source_crs=None, metric="area", tolerance=None, height_field=None, heights=None, **options):
    """Ranks candidate projected CRSs on the features (gridtruth::rank_crs): a GeoDataFrame (source CRS from its
    ``crs``) or a sequence of geometries in ``source_crs``. Options as RankOptions: ``registry``, ``generated``,
    ``leaders``, ``sample_features``, ``full_reaudit``, ``seed``, ``screen_points``, ``threads``. Unreadable or
    invalid features are left out. Returns a DataFrame best first with the columns of ``gridtruth rank`` (crs, name,
    kind, metric, worst_ppm, p95_ppm, pass_share, inside_area_of_use, definition) and screen_ppm, features,
    unmeasured, sampled."""
    geometries, field_heights, source_crs = _geometries_of(data, source_crs, height_field)
    options.update(source_crs=source_crs, metric=metric, tolerance=_tolerance_text(tolerance) or None)
    rows = _core.rank(geometries, field_heights if heights is None else heights, options)
    return pd.DataFrame(rows, columns=["crs", "name", "kind", "metric", "worst_ppm", "p95_ppm", "pass_share",
                                       "inside_area_of_use", "definition", "screen_ppm", "features", "unmeasured",
                                       "sampled"])


def tailor(data, family, source_crs=None, metric="area", tolerance=None, height_field=None, heights=None,
           **options):
    """Fits a projection family ("albers", "lambert-conic", "transverse-mercator", "azimuthal-equal-area",
    "oblique-mercator") to the features (gridtruth::tailor_crs). Data and options as rank(), plus
    ``max_evaluations``, ``optimise_scale``, ``compare_registry``. Returns a dict: family, parameters, proj_string,
    wkt2, start_objective_ppm, objective_ppm, evaluations, audit and best_registry (rows as rank()'s)."""
    geometries, field_heights, source_crs = _geometries_of(data, source_crs, height_field)
    options.update(source_crs=source_crs, metric=metric, tolerance=_tolerance_text(tolerance) or None)
    return _core.tailor(geometries, field_heights if heights is None else heights, family, options)


# ---- The run summary: the counts, totals and worst features of `gridtruth audit --summary` ----------------------

WORST_COUNT = 10  # as the command's summary
_AREAL = ("Polygon", "MultiPolygon")
_LINEAR = ("LineString", "MultiLineString")


def _exact_parts(values):
    """Three floats whose sum is the exact sum of ``values`` to about 1e-48 relative (each the correctly rounded
    remainder, math.fsum), so that partitions' parts merge by math.fsum into the correctly rounded total whatever
    the partitioning."""
    values = [float(v) for v in values]
    s = math.fsum(values)
    r = math.fsum(values + [-s])
    return [s, r, math.fsum(values + [-s, -r])]


def partial_summary(table, offset=0):
    """The mergeable summary of a result table whose first row is at 0-based input position ``offset``."""
    status = table["status"].to_numpy()
    verdict = table["verdict"].to_numpy()
    kind = table["geometry_type"].to_numpy()
    ok = status == "ok"
    part = {
        "read": len(table), "ok": int(ok.sum()), "invalid": int((status == "invalid").sum()),
        "unmeasurable": int((status == "unmeasurable").sum()), "pass": int((verdict == "pass").sum()),
        "fail": int((verdict == "fail").sum()),
    }
    areal = ok & np.isin(kind, _AREAL) & ~np.isnan(table["true_area_m2"].to_numpy())
    linear = ok & np.isin(kind, _LINEAR) & ~np.isnan(table["true_length_m"].to_numpy())
    part["area_features"] = int(areal.sum())
    part["length_features"] = int(linear.sum())
    for name, mask, column in (("true_area", areal, "true_area_m2"), ("grid_area", areal, "grid_area_m2"),
                               ("true_length", linear, "true_length_m"), ("grid_length", linear, "grid_length_m")):
        part[name] = _exact_parts(table[column].to_numpy()[mask])
    worst = []
    ids = table["id"].to_numpy()
    for measure, mask in (("area", areal), ("length", linear)):
        ppm = table[f"{measure}_error_ppm"].to_numpy()
        error = table[f"{measure}_error_m2" if measure == "area" else "length_error_m"].to_numpy()
        for i in np.flatnonzero(mask & np.isfinite(ppm)):
            worst.append((-abs(ppm[i]), offset + int(i) + 1, str(ids[i]), kind[i], measure, float(ppm[i]),
                          float(error[i]), verdict[i]))
    worst.sort(key=lambda w: (w[0], w[1]))
    part["worst"] = worst[:WORST_COUNT]
    return part


def _ppm(error, reference):
    return 1e6 * error / reference if reference != 0 else math.nan


def _number(v):
    return v if math.isfinite(v) else None


def merge_summaries(parts, auditor=None):
    """One summary (a dict laid out as ``gridtruth audit --summary``'s JSON: counts, totals, worst_features,
    exit_status; with ``auditor``, its CRSs, transformation, edges and options too) of partial_summary() parts.
    Totals are the correctly rounded sums of the features' values, in metres and square metres."""
    counts = {k: sum(p[k] for p in parts) for k in ("read", "ok", "invalid", "unmeasurable", "pass", "fail")}
    sums = {k: math.fsum(x for p in parts for x in p[k])
            for k in ("true_area", "grid_area", "true_length", "grid_length")}
    tl, gl, ta, ga = sums["true_length"], sums["grid_length"], sums["true_area"], sums["grid_area"]
    worst = sorted((w for p in parts for w in p["worst"]), key=lambda w: (w[0], w[1]))[:WORST_COUNT]
    out = {}
    if auditor is not None:
        out.update(source_crs=_summary_crs(auditor.source), target_crs=_summary_crs(auditor.target),
                   datum_transformation=auditor.transform, edges=auditor.edges,
                   options={"height_m": auditor.options["height_m"] or 0.0,
                            "densify_tolerance_m": auditor.options["densify_tolerance_m"],
                            "tolerances": auditor.tolerances})
    out["units"] = {"name": "metric", "length_unit": "m", "area_unit": "m2", "metres_per_length_unit": 1.0,
                    "square_metres_per_area_unit": 1.0}
    out["counts"] = counts
    out["totals"] = {
        "length_features": sum(p["length_features"] for p in parts), "true_length": _number(tl),
        "grid_length": _number(gl), "length_error": _number(gl - tl), "length_error_ppm": _number(_ppm(gl - tl, tl)),
        "area_features": sum(p["area_features"] for p in parts), "true_area": _number(ta), "grid_area": _number(ga),
        "area_error": _number(ga - ta), "area_error_ppm": _number(_ppm(ga - ta, ta)),
    }
    out["worst_features"] = [{"id": w[2], "position": w[1], "geometry_type": w[3], "measure": w[4],
                              "error_ppm": _number(w[5]), "error": _number(w[6]), "verdict": w[7]} for w in worst]
    out["exit_status"] = 1 if counts["invalid"] + counts["unmeasurable"] + counts["fail"] > 0 else 0
    return out


def _summary_crs(info):
    return {k: info[k] for k in ("definition", "name", "id", "datum", "ellipsoid", "linear_unit")}


def summary(table, auditor=None):
    """The run summary of a result table (rows in input order), laid out as ``gridtruth audit --summary``'s JSON
    in metric units: counts, totals (correctly rounded sums), the 10 worst features by |ppm| (ties by position),
    exit_status."""
    return merge_summaries([partial_summary(table)], auditor)
