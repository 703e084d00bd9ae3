#!/usr/bin/env python3
"""Independent check of a driftplan GeoJSON file with shapely (GEOS).

Usage: check_geojson.py FILE.geojson

For every feature: the geometry must be a valid Polygon/MultiPolygon (shapely `is_valid`,
OGC simple-feature rules as GEOS implements them), exterior rings counter-clockwise and holes
clockwise (RFC 7946 section 3.1.6, checked both with `LinearRing.is_ccw` and by comparing with
`shapely.geometry.polygon.orient(poly, sign=1.0)`). Prints one JSON object and exits 1 when any
problem was found.
"""
import json
import sys

from shapely.geometry import shape
from shapely.geometry.polygon import orient
from shapely.validation import explain_validity


def polygons(geom):
    if geom.geom_type == "Polygon":
        return [geom]
    if geom.geom_type == "MultiPolygon":
        return list(geom.geoms)
    return []


def main(path):
    with open(path, encoding="utf-8") as f:
        doc = json.load(f)
    problems = []
    if doc.get("type") != "FeatureCollection":
        problems.append("top level is not a FeatureCollection")
    if "crs" in doc:
        problems.append("has a crs member (RFC 7946 section 4 removed it)")
    out = {"features": 0, "polygons": 0, "holes": 0, "planar_area_deg2": [], "problems": problems}
    for i, feat in enumerate(doc.get("features", [])):
        out["features"] += 1
        gj = feat.get("geometry")
        if gj is None or gj.get("type") not in ("Polygon", "MultiPolygon"):
            problems.append(f"feature {i}: geometry is not a Polygon/MultiPolygon")
            continue
        geom = shape(gj)
        if not geom.is_valid:
            problems.append(f"feature {i}: invalid: {explain_validity(geom)}")
        for j, poly in enumerate(polygons(geom)):
            out["polygons"] += 1
            out["holes"] += len(poly.interiors)
            if not poly.exterior.is_ccw:
                problems.append(f"feature {i} polygon {j}: exterior is clockwise")
            for k, hole in enumerate(poly.interiors):
                if hole.is_ccw:
                    problems.append(f"feature {i} polygon {j} hole {k}: counter-clockwise")
            oriented = orient(poly, sign=1.0)
            if list(oriented.exterior.coords) != list(poly.exterior.coords):
                problems.append(f"feature {i} polygon {j}: orient() changes the exterior")
        out["planar_area_deg2"].append(geom.area)
    print(json.dumps(out))
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
