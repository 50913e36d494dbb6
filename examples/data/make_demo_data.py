#!/usr/bin/env python3
"""Writes the bundled demo scenario of gridtruth (invented: the agency, the places and the features).

The Brannock Valley Habitat Commission, a fictional agency, manages habitat units, a gas lateral and survey
monuments spread over eight degrees of latitude and the whole width of UTM zone 15N (96°W to 90°W), so that the
grid's distortion differs visibly from feature to feature: near the central meridian (93°W) UTM shrinks lengths
by 400 ppm, near the zone edges it stretches them.

Run from anywhere: python3 make_demo_data.py  (writes habitat_survey.geojson and habitat_survey.csv beside it).
The output is deterministic; the files are committed, this script documents how they were made.
"""
import json
import math
import os

HERE = os.path.dirname(os.path.abspath(__file__))


def ring(lon0, lat0, radius_km, vertices, wobble, phase=0.0, clockwise=False):
    """An irregular closed ring around (lon0, lat0): radius varies smoothly with the angle."""
    km_per_deg_lat = 111.2
    km_per_deg_lon = 111.32 * math.cos(math.radians(lat0))
    pts = []
    for k in range(vertices):
        a = 2 * math.pi * k / vertices
        if clockwise:
            a = -a
        r = radius_km * (1 + wobble * math.sin(3 * a + phase) + 0.5 * wobble * math.cos(5 * a + 2 * phase))
        pts.append([round(lon0 + r * math.cos(a) / km_per_deg_lon, 6), round(lat0 + r * math.sin(a) / km_per_deg_lat, 6)])
    pts.append(pts[0])
    return pts


def feature(fid, name, kind, geometry):
    return {"type": "Feature", "id": fid, "properties": {"unit_id": fid, "name": name, "kind": kind},
            "geometry": geometry}


features = [
    # Habitat units (polygons). Counter-clockwise outer rings, clockwise holes (RFC 7946 section 3.1.6).
    feature("HU-01", "Kettle Fen", "habitat unit",
            {"type": "Polygon", "coordinates": [ring(-95.72, 47.61, 1.8, 14, 0.18)]}),
    feature("HU-02", "Otterbrook Prairie", "habitat unit",
            {"type": "Polygon", "coordinates": [ring(-93.04, 45.22, 2.4, 16, 0.12, 0.7)]}),
    feature("HU-03", "Glasswillow Marsh", "habitat unit",
            {"type": "Polygon", "coordinates": [ring(-90.41, 43.08, 3.1, 18, 0.15, 1.3),
                                                ring(-90.405, 43.083, 0.9, 10, 0.1, 0.2, clockwise=True)]}),
    feature("HU-04", "Cinderbluff Savanna", "habitat unit",
            {"type": "MultiPolygon", "coordinates": [[ring(-94.31, 41.52, 1.5, 12, 0.2, 2.1)],
                                                     [ring(-94.255, 41.547, 0.8, 9, 0.1, 0.4)]]}),
    feature("HU-05", "Quillon Flats", "habitat unit",
            {"type": "Polygon", "coordinates": [
                [[-91.45, 45.90], [-91.05, 45.90], [-91.05, 46.12], [-91.45, 46.12], [-91.45, 45.90]],
                [[-91.30, 45.98], [-91.30, 46.03], [-91.20, 46.03], [-91.20, 45.98], [-91.30, 45.98]]]}),
    feature("HU-06", "Larkspur Draw", "habitat unit",
            {"type": "Polygon", "coordinates": [ring(-92.38, 40.61, 1.2, 11, 0.25, 0.9)]}),
    # Deliberately invalid: a digitising slip left the ring with only two distinct vertices.
    feature("HU-07", "Sedgewick Seep", "habitat unit",
            {"type": "Polygon", "coordinates": [[[-94.9, 44.3], [-94.89, 44.31], [-94.9, 44.3], [-94.9, 44.3]]]}),
    # The gas lateral (a line across the zone) and a short spur to a compressor site.
    feature("PL-01", "Brannock Lateral", "pipeline route",
            {"type": "LineString", "coordinates": [
                [-95.52, 40.31], [-95.11, 41.02], [-94.64, 41.77], [-94.18, 42.50], [-93.71, 43.26],
                [-93.25, 44.03], [-92.79, 44.81], [-92.30, 45.60], [-91.84, 46.38], [-91.37, 47.12],
                [-90.98, 47.83]]}),
    feature("PL-02", "Heronsgate Spur", "pipeline route",
            {"type": "MultiLineString", "coordinates": [
                [[-92.79, 44.81], [-92.55, 44.86], [-92.31, 44.93]],
                [[-92.31, 44.93], [-92.28, 45.02]]]}),
    # Survey monuments.
    feature("SM-01", "Aldergate monument", "survey monument", {"type": "Point", "coordinates": [-95.81, 47.95]}),
    feature("SM-02", "Tollan Knob monument", "survey monument", {"type": "Point", "coordinates": [-93.0, 44.0]}),
    feature("SM-03", "Fernhollow monument", "survey monument", {"type": "Point", "coordinates": [-90.22, 40.45]}),
]


def wkt(g):
    def pos(p):
        return f"{p[0]} {p[1]}"

    def path(ps):
        return "(" + ", ".join(pos(p) for p in ps) + ")"

    def poly(rings):
        return "(" + ", ".join(path(r) for r in rings) + ")"

    t, c = g["type"], g["coordinates"]
    if t == "Point":
        return f"POINT ({pos(c)})"
    if t == "LineString":
        return "LINESTRING " + path(c)
    if t == "MultiLineString":
        return "MULTILINESTRING (" + ", ".join(path(p) for p in c) + ")"
    if t == "Polygon":
        return "POLYGON " + poly(c)
    if t == "MultiPolygon":
        return "MULTIPOLYGON (" + ", ".join(poly(p) for p in c) + ")"
    raise ValueError(t)


def csv_field(s):
    return '"' + s.replace('"', '""') + '"' if any(ch in s for ch in ',"\r\n') else s


collection = {"type": "FeatureCollection",
              "name": "Brannock Valley Habitat Commission: habitat units, lateral and monuments (invented)",
              "features": features}
with open(os.path.join(HERE, "habitat_survey.geojson"), "w", newline="\n") as f:
    f.write('{"type": "FeatureCollection",\n "name": ' + json.dumps(collection["name"]) + ',\n "features": [\n')
    f.write(",\n".join("  " + json.dumps(x) for x in features))
    f.write("\n]}\n")

with open(os.path.join(HERE, "habitat_survey.csv"), "w", newline="") as f:
    f.write("unit_id,name,kind,wkt\r\n")
    for x in features:
        p = x["properties"]
        f.write(",".join(csv_field(v) for v in (p["unit_id"], p["name"], p["kind"], wkt(x["geometry"]))) + "\r\n")
