#!/usr/bin/python3
# Writes the GDSII test fixtures with an independent GDSII library (Debian's python3-gdspy; run with
# the system interpreter: /usr/bin/python3 make_fixtures.py) and records that library's own
# flattening as the expected result: per layer/datatype the number of polygons, their total area and
# the bounding box, in metres. Invented shapes only.
import json
import gdspy

UNIT, PRECISION = 1e-6, 1e-9  # user unit 1 um, database unit 1 nm


def expected(lib, top, name):
    lib.write_gds(name + ".gds")
    back = gdspy.GdsLibrary(infile=name + ".gds")
    cell = back.cell_dict[top]
    out = {}
    for (layer, datatype), polys in cell.get_polygons(by_spec=True).items():
        area = 0.0
        xs, ys = [], []
        for p in polys:
            x, y = p[:, 0], p[:, 1]
            area += 0.5 * abs(sum(x[i] * y[(i + 1) % len(x)] - x[(i + 1) % len(x)] * y[i] for i in range(len(x))))
            xs += list(x)
            ys += list(y)
        out["%d/%d" % (layer, datatype)] = {
            "count": int(len(polys)),
            "area_m2": float(area) * UNIT * UNIT,
            "bbox_m": [float(min(xs)) * UNIT, float(min(ys)) * UNIT, float(max(xs)) * UNIT, float(max(ys)) * UNIT],
        }
    labels = []
    for lab in cell.get_labels():
        labels.append({"text": lab.text, "layer": int(lab.layer), "at_m": [float(lab.position[0]) * UNIT, float(lab.position[1]) * UNIT]})
    with open(name + ".json", "w") as f:
        json.dump({"layers": out, "labels": sorted(labels, key=lambda l: l["text"])}, f, indent=1, sort_keys=True)


# 1. Transformations: an L-shaped part placed rotated, reflected, magnified, nested and in arrays.
# (gdspy 1.4 writes paths as polygons; PATH and BOX records are tested on hand-made records.)
lib = gdspy.GdsLibrary(unit=UNIT, precision=PRECISION)
part = gdspy.Cell("PART", exclude_from_current=True)
lib.add(part)
part.add(gdspy.Polygon([(0, 0), (3, 0), (3, 1), (1, 1), (1, 4), (0, 4)], layer=5))
part.add(gdspy.Label("P", (0.5, 0.5), layer=63))
inner = gdspy.Cell("INNER", exclude_from_current=True)
lib.add(inner)
inner.add(gdspy.CellReference(part, (10, 0), rotation=90))
top = gdspy.Cell("TOP", exclude_from_current=True)
lib.add(top)
top.add(gdspy.CellReference(part, (0, 0)))
top.add(gdspy.CellReference(part, (20, 0), rotation=30, magnification=1.5))
top.add(gdspy.CellReference(part, (40, 0), x_reflection=True))
top.add(gdspy.CellReference(part, (0, 30), rotation=180, x_reflection=True, magnification=0.5))
top.add(gdspy.CellArray(part, 3, 2, (6, 8), (60, 0)))
top.add(gdspy.CellArray(part, 2, 2, (6, 8), (0, 60), rotation=45))
top.add(gdspy.CellReference(inner, (0, -20), rotation=-90))
top.add(gdspy.Rectangle((50, -50), (52, -45), layer=1, datatype=2))
expected(lib, "TOP", "transforms")

# 2. A Hall bar with one split-gate constriction: designs/01_hallbar_qpc.yaml drawn as a layout.
lib = gdspy.GdsLibrary(unit=UNIT, precision=PRECISION)
dev = gdspy.Cell("DEVICE", exclude_from_current=True)
lib.add(dev)
dev.add(gdspy.Polygon([(-60, -10), (60, -10), (60, 10), (-60, 10)], layer=1))
contacts = {"W": [(-70, -6), (-58, -6), (-58, 6), (-70, 6)], "E": [(58, -6), (70, -6), (70, 6), (58, 6)],
            "NW": [(-33, 8), (-27, 8), (-27, 14), (-33, 14)], "NE": [(27, 8), (33, 8), (33, 14), (27, 14)],
            "SW": [(-33, -14), (-27, -14), (-27, -8), (-33, -8)], "SE": [(27, -14), (33, -14), (33, -8), (27, -8)]}
for name, pts in contacts.items():
    dev.add(gdspy.Polygon(pts, layer=3))
    cx = sum(p[0] for p in pts) / 4
    cy = sum(p[1] for p in pts) / 4
    dev.add(gdspy.Label(name, (cx, cy), layer=63))
# Gate QS drawn as two touching shapes that the reader must merge.
dev.add(gdspy.Polygon([(-0.5, -14), (0.5, -14), (0.5, -7), (-0.5, -7)], layer=5))
dev.add(gdspy.Polygon([(-0.5, -7), (0.5, -7), (0.5, -0.4), (0, -0.15), (-0.5, -0.4)], layer=5))
dev.add(gdspy.Label("QS", (0, -10), layer=63))
dev.add(gdspy.Polygon([(-0.5, 14), (-0.5, 0.4), (0, 0.15), (0.5, 0.4), (0.5, 14)], layer=5))
dev.add(gdspy.Label("QN", (0, 10), layer=63))
expected(lib, "DEVICE", "hallbar")
