# Checks the pictures that view_in_paraview.py wrote (run with pvbatch, which
# brings VTK, numpy and matplotlib):
#   - the time steps of the sweep's collection are the swept gaps, in order,
#     and there is one picture per gap and view;
#   - each picture has the requested size;
#   - the film is one rectangle of colour-map colours with the aspect ratio
#     of the period at the stated vertical exaggeration;
#   - the colours are the collection probability: at points across the
#     film the colour, read back through matplotlib's viridis table (the
#     published map, independent of ParaView's copy), gives f_c from the
#     field file to within 0.06;
#   - the white dead-zone contour is drawn where f_c crosses the threshold
#     in the film and nowhere when it does not;
#   - the splitting view is filled with inferno colours and shows white
#     current streamlines.
#
#   pvbatch check_views.py --sweep SWEEP_DIR --sweep-pictures DIR --gaps 2,4,8
#                          --solve SOLVE_DIR --solve-pictures DIR --size 1600x560
import argparse
import json
import os
import sys

import numpy as np
from matplotlib import colormaps
from paraview.simple import PVDReader
from vtkmodules.vtkIOImage import vtkPNGReader
from vtkmodules.vtkIOXML import vtkXMLUnstructuredGridReader
from vtkmodules.vtkFiltersCore import vtkProbeFilter
from vtkmodules.vtkCommonDataModel import vtkPolyData
from vtkmodules.vtkCommonCore import vtkPoints
from vtkmodules.util.numpy_support import vtk_to_numpy

failures = []


def check(condition, message):
    print(("ok   " if condition else "FAIL ") + message)
    if not condition:
        failures.append(message)


def read_png(path):
    reader = vtkPNGReader()
    reader.SetFileName(path)
    reader.Update()
    image = reader.GetOutput()
    w, h, _ = image.GetDimensions()
    pixels = vtk_to_numpy(image.GetPointData().GetScalars()).reshape(h, w, -1)[:, :, :3]
    return np.flipud(pixels).astype(float)  # row 0 at the top, as on screen


def table(name):
    return np.array([colormaps[name](i / 255.0)[:3] for i in range(256)]) * 255.0


def nearest(pixels, colours):
    """Index into `colours` of each pixel's nearest colour and its distance."""
    unique, inverse = np.unique(pixels.reshape(-1, 3), axis=0, return_inverse=True)
    d = np.linalg.norm(unique[:, None, :] - colours[None, :, :], axis=2)
    best, dist = d.argmin(axis=1)[inverse], d.min(axis=1)[inverse]
    return best.reshape(pixels.shape[:2]), dist.reshape(pixels.shape[:2])


def film_box(in_map):
    """The topmost band of rows holding colour-map pixels (the colour bar lies
    below the film, separated by rows without them) and its columns."""
    rows = np.where(in_map.sum(axis=1) > 3)[0]
    top = rows[0]
    bottom = top
    while bottom + 1 < in_map.shape[0] and in_map[bottom + 1].sum() > 3:
        bottom += 1
    cols = np.where(in_map[top:bottom + 1].sum(axis=0) > 0.5 * (bottom - top + 1))[0]
    return top, bottom, cols[0], cols[-1]


def probe(vtu, points):
    reader = vtkXMLUnstructuredGridReader()
    reader.SetFileName(vtu)
    reader.Update()
    pts = vtkPoints()
    for x, y in points:
        pts.InsertNextPoint(x, y, 0.0)
    source = vtkPolyData()
    source.SetPoints(pts)
    p = vtkProbeFilter()
    p.SetInputData(source)
    p.SetSourceData(reader.GetOutput())
    p.Update()
    return vtk_to_numpy(p.GetOutput().GetPointData().GetArray("collection_probability"))


def check_collection(path, summary, vtu, listing, picture, size, label):
    pixels = read_png(path)
    check(pixels.shape[1] == size[0] and pixels.shape[0] == size[1],
          "%s: %dx%d pixels" % (label, pixels.shape[1], pixels.shape[0]))
    viridis = table("viridis")
    index, dist = nearest(pixels, viridis)
    in_map = dist < 8
    top, bottom, left, right = film_box(in_map)
    box_h, box_w = bottom - top + 1, right - left + 1
    period = summary["period"]
    width, thickness = period["width_um"], period["absorber_thickness_um"]
    factor = picture["vertical_exaggeration"]
    want = width / (thickness * factor)
    check(abs(box_w / box_h / want - 1) < 0.06,
          "%s: film %dx%d pixels, aspect %.3f, period %.3g um x %.3g um at x%g: %.3f"
          % (label, box_w, box_h, box_w / box_h, width, thickness, factor, want))
    white = (pixels > 245).all(axis=2)
    box = (slice(top, bottom + 1), slice(left, right + 1))
    filled = (in_map[box] | white[box]).mean()
    check(filled > 0.97, "%s: %.1f %% of the film rectangle in viridis (or contour) colours"
          % (label, 100 * filled))
    # Colour against f_c at mid-height, at 9 points across the period.
    xs = [width * (k + 0.5) / 9 for k in range(9)]
    fc = probe(vtu, [(x, 0.5 * thickness) for x in xs])
    row = top + box_h // 2
    worst = 0.0
    for x, f in zip(xs, fc):
        col = left + int(x / width * box_w)
        if white[row, col] or not in_map[row, col]:
            continue
        worst = max(worst, abs(index[row, col] / 255.0 - f))
    check(worst < 0.06, "%s: colours read back as f_c within %.3f of the field file" % (label, worst))
    # The contour: present exactly when f_c crosses the threshold in the film.
    threshold = listing["threshold"]
    column_fc = probe(vtu, [(width * (k + 0.5) / 200, thickness * (j + 0.5) / 8)
                            for k in range(200) for j in range(8)])
    crosses = column_fc.min() < threshold < column_fc.max()
    line_pixels = int(white[box].sum())
    if crosses:
        check(line_pixels > 0.8 * box_h, "%s: f_c crosses %g; contour drawn (%d white pixels)"
              % (label, threshold, line_pixels))
    else:
        check(line_pixels < 0.01 * box_h * box_w, "%s: f_c does not cross %g; no contour (%d white pixels)"
              % (label, threshold, line_pixels))
    return crosses


def check_splitting(path, size, label):
    pixels = read_png(path)
    check(pixels.shape[1] == size[0] and pixels.shape[0] == size[1],
          "%s: %dx%d pixels" % (label, pixels.shape[1], pixels.shape[0]))
    _, dist = nearest(pixels, table("inferno"))
    in_map = dist < 8
    top, bottom, left, right = film_box(in_map)
    box = (slice(top, bottom + 1), slice(left, right + 1))
    white = (pixels > 245).all(axis=2)
    filled = (in_map[box] | white[box]).mean()
    # Streamlines are drawn smoothed: their edges blend white and inferno.
    check(filled > 0.8, "%s: %.1f %% of the film rectangle in inferno (or streamline) colours"
          % (label, 100 * filled))
    check(white[box].sum() > 2 * (bottom - top + 1),
          "%s: current streamlines drawn (%d white pixels)" % (label, white[box].sum()))


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--sweep", required=True)
    parser.add_argument("--sweep-pictures", required=True)
    parser.add_argument("--gaps", required=True)
    parser.add_argument("--solve", required=True)
    parser.add_argument("--solve-pictures", required=True)
    parser.add_argument("--size", default="1600x560")
    a = parser.parse_args()
    size = [int(v) for v in a.size.split("x")]
    gaps = [float(g) for g in a.gaps.split(",")]

    # Time steps: ParaView's own reading of the sweep's collection.
    reader = PVDReader(FileName=os.path.join(a.sweep, "sweep-collection.pvd"))
    steps = list(reader.TimestepValues)
    check(steps == gaps, "sweep: time steps %s are the gaps %s" % (steps, gaps))
    listing = json.load(open(os.path.join(a.sweep_pictures, "pictures.json")))
    for view in ("collection", "splitting"):
        n = len([p for p in listing["pictures"] if p["view"] == view])
        check(n == len(gaps), "sweep: %d %s pictures for %d gaps" % (n, view, len(gaps)))

    crossing = []
    for p in listing["pictures"]:
        path = os.path.join(a.sweep_pictures, p["file"])
        case = os.path.join(a.sweep, "cases", "Gap=%g" % p["time"])
        summary = json.load(open(os.path.join(case, "summary.json")))
        if p["view"] == "collection":
            vtu = os.path.join(case, summary["collection_map"]["file"])
            crossing.append(check_collection(path, summary, vtu, listing, p, size, p["file"]))
        else:
            check_splitting(path, size, p["file"])
    check(any(crossing) and not all(crossing),
          "sweep: some gaps have a dead-zone contour and some do not (%s)" % crossing)

    listing = json.load(open(os.path.join(a.solve_pictures, "pictures.json")))
    summary = json.load(open(os.path.join(a.solve, "summary.json")))
    vtu = os.path.join(a.solve, summary["collection_map"]["file"])
    check_collection(os.path.join(a.solve_pictures, "collection.png"), summary, vtu, listing,
                     listing["pictures"][0], size, "solve")
    check_splitting(os.path.join(a.solve_pictures, "splitting.png"), size, "solve splitting")

    if failures:
        print("%d check(s) failed" % len(failures))
        sys.exit(1)
    print("check_views: all checks passed")


main()
