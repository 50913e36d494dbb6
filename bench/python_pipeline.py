#!/usr/bin/python3
"""A straightforward Python pipeline doing only truth + planar area (Debian's python3-pyproj, python3-shapely):
the yardstick for the command's speed in bench/run.sh. Reads newline-delimited GeoJSON, writes CSV."""
import json
import sys

from pyproj import Geod, Transformer
from shapely.geometry import shape
from shapely.ops import transform

geod = Geod(ellps="WGS84")
to_grid = Transformer.from_crs("EPSG:4326", sys.argv[2], always_xy=True)
with open(sys.argv[1]) as src, open(sys.argv[3], "w") as out:
    out.write("id,true_area_m2,grid_area_m2,area_error_ppm\n")
    for line in src:
        feature = json.loads(line)
        geometry = shape(feature["geometry"])
        true_area, _ = geod.geometry_area_perimeter(geometry)
        true_area = abs(true_area)
        grid_area = transform(to_grid.transform, geometry).area
        out.write(f"{feature['id']},{true_area!r},{grid_area!r},{1e6 * (grid_area - true_area) / true_area!r}\n")
