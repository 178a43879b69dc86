# Ready-made ParaView views of a backcomb result: written by `backcomb solve`
# and `backcomb sweep` next to their results as view_in_paraview.py.
#
# Two views of the film cross-section (x across the period, y up through
# the film; the vertical scale is exaggerated, the factor is printed on the
# picture):
#   collection  coloured by the collection probability f_c at short
#               circuit (0..1, viridis), the dead-zone contour
#               f_c = threshold in white, the fingers as grey bars below
#   splitting   at the maximum power point: the quasi-Fermi-level splitting
#               E_Fn - E_Fp (inferno) with the current streamlines in white
# For a sweep the swept value is ParaView's time: the play button steps
# through the cases.
#
# Open the views in ParaView (the folder defaults to this file's folder):
#   paraview --script=FOLDER/view_in_paraview.py
# Pictures without a display (one PNG per view and case, into DIR):
#   pvbatch FOLDER/view_in_paraview.py [FOLDER] --pictures DIR [--size 1600x560]
#   (a ParaView built without offscreen rendering needs `xvfb-run -a pvbatch ...`)
# Exit codes: 0 done, 2 the folder is not a backcomb result, 4 a picture
# could not be written.
import argparse
import json
import math
import os
import sys

import paraview.simple
from paraview.simple import (AnnotateTimeFilter, Contour, CreateView, GetAnimationScene,
                             GetColorTransferFunction, GetScalarBar, PVDReader, Render,
                             SaveScreenshot, SetActiveView, Show, StreamTracer, Text,
                             Threshold, UpdatePipeline, XMLPolyDataReader,
                             XMLUnstructuredGridReader)

SCRIPT_NAME = "view_in_paraview.py"
WHITE, GREY, DARK = [1.0, 1.0, 1.0], [0.55, 0.55, 0.55], [0.08, 0.08, 0.08]


class NotAResult(Exception):
    pass


def read_json(path):
    try:
        with open(path, encoding="utf-8") as f:
            return json.load(f)
    except (OSError, ValueError) as e:
        raise NotAResult("%s: cannot be read as JSON (%s)" % (path, e))


def nice_factor(ratio):
    """The vertical exaggeration: 1, 2 or 5 times a power of ten, at most
    `ratio` (so the widest period is drawn about four times wider than
    tall)."""
    if ratio <= 1:
        return 1
    e = math.floor(math.log10(ratio))
    for m in (5, 2, 1):
        if m * 10 ** e <= ratio:
            return m * 10 ** e
    return 10 ** e


class Result:
    """What the views need from a results folder: the collection-probability
    files, the maximum-power files and the finger files, each with the value
    ParaView shows as time (the swept value; one file and no time for a
    solve), and the period's geometry."""

    def __init__(self, folder):
        self.folder = os.path.abspath(folder)
        summary = os.path.join(self.folder, "summary.json")
        sweep = os.path.join(self.folder, "sweep.json")
        if os.path.isfile(summary):
            self.kind = "solve"
            s = read_json(summary)
            if "backcomb_version" not in s:
                raise NotAResult("%s was not written by backcomb" % summary)
            self.summaries = [s]
            self.collection = self._file(s, "collection_map")
            self.max_power = self._file(s, "max_power_fields")
            self.fingers = self._fingers(s)
            self.swept, self.unit = None, ""
            self.case_times = [0.0]
        elif os.path.isfile(sweep):
            self.kind = "sweep"
            s = read_json(sweep)
            views = s.get("views") if isinstance(s, dict) else None
            if not isinstance(views, dict):
                raise NotAResult("%s has no \"views\" entry (merge the sweep with this backcomb version)" % sweep)
            self.swept, self.unit = views.get("swept_entry"), views.get("swept_unit", "")
            self.summaries = [read_json(os.path.join(self.folder, c, "summary.json"))
                              for c in views.get("cases", [])]
            self.case_times = views.get("times", [])
            self.collection = self._collection_file(views.get("collection"))
            self.max_power = self._collection_file(views.get("max_power"))
            self.fingers = self._collection_file(views.get("fingers"))
        else:
            raise NotAResult("%s is not a backcomb result: it holds neither summary.json (solve) nor "
                             "sweep.json (sweep)" % self.folder)
        if not self.collection:
            raise NotAResult("%s has no collection-probability field file (a dark case, or "
                             "Output/Write fields = false)" % self.folder)
        periods = [p.get("period") for p in self.summaries if isinstance(p.get("period"), dict)]
        if not periods:
            raise NotAResult("%s: summary.json has no \"period\" (geometry) entry" % self.folder)
        self.width = max(p["width_um"] for p in periods)
        # Each case's own width, by its time (the pictures frame each case).
        self.widths = {t: s["period"]["width_um"] for t, s in zip(self.case_times, self.summaries)
                       if isinstance(s.get("period"), dict)}
        self.thickness = max(p["absorber_thickness_um"] for p in periods)
        self.threshold = next((p["dead_zone"]["threshold"] for p in self.summaries
                               if isinstance(p.get("dead_zone"), dict)), 0.5)
        self.factor = nice_factor(self.width / self.thickness / 4.0)
        edges = [0.5 * p["electron_finger_width_um"] for p in periods if p.get("electron_finger_width_um")]
        self.seed_x = min(edges) if edges else 0.5 * min(p["width_um"] for p in periods)

    def _file(self, summary, key):
        entry = summary.get(key)
        if isinstance(entry, dict) and isinstance(entry.get("file"), str):
            path = os.path.join(self.folder, entry["file"])
            if os.path.isfile(path):
                return path
        return None

    def _fingers(self, summary):
        path = os.path.join(self.folder, "fields", "fingers.vtp")
        return path if os.path.isfile(path) else None

    def _collection_file(self, name):
        if isinstance(name, str) and os.path.isfile(os.path.join(self.folder, name)):
            return os.path.join(self.folder, name)
        return None

    def times(self):
        return list(self.reader(self.collection).TimestepValues or [])

    @staticmethod
    def reader(path):
        if path.endswith(".pvd"):
            return PVDReader(FileName=path)
        if path.endswith(".vtp"):
            return XMLPolyDataReader(FileName=[path])
        return XMLUnstructuredGridReader(FileName=[path])


class ViewParts:
    """A view with what depends on the vertical exaggeration: the displays
    (scaled in y), the axes and the title that states the factor."""

    def __init__(self, view, factor):
        self.view, self.factor = view, factor
        self.displays, self.title, self.title_text = [], None, ""

    def flat(self, display, lift=0.0):
        """Unlit colours (the picture shows the colour map's own colours),
        the vertical scale exaggerated, `lift` towards the camera."""
        display.Ambient, display.Diffuse = 1.0, 0.0
        display.Position = [0.0, 0.0, lift]
        self.displays.append(display)
        display.Scale = [1.0, self.factor, 1.0]

    def set_factor(self, factor):
        self.factor = factor
        for d in self.displays:
            d.Scale = [1.0, factor, 1.0]
        self.view.AxesGrid.DataScale = [1.0, factor, 1.0]
        self.view.AxesGrid.YTitle = "y (µm), ×%g" % factor
        if self.title is not None:
            self.title.Text = self.title_text % factor


def film_parts(reader):
    absorber = Threshold(Input=reader, Scalars=["POINTS", "in_absorber"], LowerThreshold=0.5,
                         UpperThreshold=1.5, ThresholdMethod="Between")
    others = Threshold(Input=reader, Scalars=["POINTS", "in_absorber"], LowerThreshold=-0.5,
                       UpperThreshold=0.5, ThresholdMethod="Between")
    return absorber, others


def new_view(result, size):
    view = CreateView("RenderView")
    view.ViewSize = list(size)
    view.OrientationAxesVisibility = 0
    view.Background = WHITE
    # ParaView 5.10+ takes the background from the colour palette unless told.
    if "UseColorPaletteForBackground" in view.ListProperties():
        view.UseColorPaletteForBackground = 0
    view.CameraParallelProjection = 1
    view.AxesGrid.Visibility = 1
    view.AxesGrid.DataScale = [1.0, result.factor, 1.0]
    view.AxesGrid.XTitle = "x (µm)"
    view.AxesGrid.YTitle = "y (µm), ×%g" % result.factor
    view.AxesGrid.AxesToLabel = 3  # min-x and min-y faces: the x and y axes
    view.AxesGrid.FacesToRender = 4  # the z = min face only (the film's plane)
    view.AxesGrid.ShowGrid = 0
    for axis in "XY":
        for part in ("Title", "Label"):
            setattr(view.AxesGrid, axis + part + "Color", DARK)
    SetActiveView(view)
    return ViewParts(view, result.factor)


def place_camera(parts, result, size, width=None):
    """The widest period (or one `width`), exaggerated, centred with room
    for the colour bar below and the title above."""
    view = parts.view
    width = width or result.width
    height = result.thickness * parts.factor
    aspect = float(size[0]) / size[1]
    cx, cy = 0.5 * width, 0.5 * height - 0.35 * height
    view.CameraPosition = [cx, cy, 10.0 * width]
    view.CameraFocalPoint = [cx, cy, 0.0]
    view.CameraViewUp = [0.0, 1.0, 0.0]
    view.CameraParallelScale = max(0.62 * width / aspect, 1.25 * height)


def add_fingers(parts, result):
    if not result.fingers:
        return
    fingers = Result.reader(result.fingers)
    d = Show(fingers, parts.view)
    d.AmbientColor = d.DiffuseColor = GREY
    d.ColorArrayName = [None, ""]
    parts.flat(d)


def add_title(parts, text):
    """`text` has one %g: the vertical exaggeration."""
    t = Text(Text=text % parts.factor)
    parts.title, parts.title_text = t, text
    d = Show(t, parts.view)
    d.WindowLocation = "Upper Left Corner"
    d.FontSize = 15
    d.Color = DARK


def add_case_label(view, result, reader):
    """"Geometry/Gap = 20 um" for the case on screen (a sweep)."""
    if result.kind != "sweep":
        return
    unit = "µm" if result.unit == "um" else result.unit
    label = AnnotateTimeFilter(Input=reader, Format="%s = {time:g} %s" % (result.swept, unit))
    d = Show(label, view)
    d.WindowLocation = "Upper Right Corner"
    d.FontSize = 15
    d.Color = DARK


def colour_bar(view, lut, title, subtitle, label_format):
    bar = GetScalarBar(lut, view)
    bar.RangeLabelFormat = bar.LabelFormat = label_format
    bar.AutomaticLabelFormat = 0
    bar.Title = title
    bar.ComponentTitle = subtitle
    bar.Orientation = "Horizontal"
    bar.WindowLocation = "Lower Center"
    bar.TitleColor = bar.LabelColor = DARK
    bar.ScalarBarLength = 0.4
    bar.Visibility = 1


def collection_view(result, size):
    parts = new_view(result, size)
    view = parts.view
    reader = Result.reader(result.collection)
    absorber, others = film_parts(reader)
    film = Show(absorber, view)
    film.ColorArrayName = ["POINTS", "collection_probability"]
    lut = GetColorTransferFunction("collection_probability")
    lut.ApplyPreset("Viridis (matplotlib)", True)
    lut.AutomaticRescaleRangeMode = "Never"
    lut.RescaleTransferFunction(0.0, 1.0)
    film.LookupTable = lut
    parts.flat(film)
    layers = Show(others, view)
    layers.ColorArrayName = [None, ""]
    layers.AmbientColor = layers.DiffuseColor = [0.8, 0.8, 0.8]
    parts.flat(layers)
    contour = Contour(Input=absorber, ContourBy=["POINTS", "collection_probability"],
                      Isosurfaces=[result.threshold])
    line = Show(contour, view)
    line.ColorArrayName = [None, ""]
    line.AmbientColor = line.DiffuseColor = WHITE
    line.LineWidth = 3.0
    parts.flat(line, lift=0.01 * result.width)
    add_fingers(parts, result)
    colour_bar(view, lut, "collection probability f_c at short circuit",
               " (pairs collected per pair generated; 0-1)", "%.1f")
    add_title(parts, "Dead zone: f_c < %g inside the white line; fingers in grey; vertical scale ×%%g"
              % result.threshold)
    add_case_label(view, result, reader)
    place_camera(parts, result, size)
    return parts


def splitting_view(result, size):
    parts = new_view(result, size)
    view = parts.view
    reader = Result.reader(result.max_power)
    absorber, others = film_parts(reader)
    film = Show(absorber, view)
    film.ColorArrayName = ["POINTS", "quasi_fermi_level_splitting_eV"]
    lut = GetColorTransferFunction("quasi_fermi_level_splitting_eV")
    lut.ApplyPreset("Inferno (matplotlib)", True)
    lut.AutomaticRescaleRangeMode = "Never"
    film.LookupTable = lut
    film.RescaleTransferFunctionToDataRangeOverTime()
    parts.flat(film)
    layers = Show(others, view)
    layers.ColorArrayName = [None, ""]
    layers.AmbientColor = layers.DiffuseColor = [0.8, 0.8, 0.8]
    parts.flat(layers)
    # Streamlines of the total current, seeded up through the film above the
    # electron finger's edge (the same x in every case of a sweep): the
    # current that reaches that finger from across the gap.
    lines = StreamTracer(Input=absorber, SeedType="Line",
                         Vectors=["POINTS", "current_density_mA_per_cm2"])
    lines.SeedType.Point1 = [result.seed_x, 0.04 * result.thickness, 0.0]
    lines.SeedType.Point2 = [result.seed_x, 0.96 * result.thickness, 0.0]
    lines.SeedType.Resolution = 12
    lines.MaximumStreamlineLength = 2.0 * result.width
    lines.IntegrationDirection = "BOTH"
    d = Show(lines, view)
    d.ColorArrayName = [None, ""]
    d.AmbientColor = d.DiffuseColor = WHITE
    d.LineWidth = 1.5
    parts.flat(d, lift=0.01 * result.width)
    add_fingers(parts, result)
    colour_bar(view, lut, "quasi-Fermi-level splitting E_Fn - E_Fp at the maximum power point", " (eV)", "%.3f")
    add_title(parts, "White: current streamlines at the maximum power point; fingers in grey; "
              "vertical scale ×%g")
    add_case_label(view, result, reader)
    place_camera(parts, result, size)
    return parts


def picture_name(view_name, result, index, time):
    if result.kind == "solve":
        return "%s.png" % view_name
    return "%s_%02d_%g.png" % (view_name, index + 1, time)


def write_pictures(result, views, directory, size):
    os.makedirs(directory, exist_ok=True)
    times = result.times() if result.kind == "sweep" else [0.0]
    listing = {"folder": result.folder, "kind": result.kind, "swept_entry": result.swept,
               "window_vertical_exaggeration": result.factor, "widest_width_um": result.width,
               "absorber_thickness_um": result.thickness, "threshold": result.threshold,
               "time_steps": times, "pictures": []}
    for name, parts in views:
        view = parts.view
        for i, t in enumerate(times):
            view.ViewTime = t
            # A picture frames its own case at the exaggeration that suits
            # its width (stated on it and in pictures.json); the window
            # shows every case in the frame of the widest, at one scale.
            width = result.widths.get(t, result.width)
            factor = nice_factor(width / result.thickness / 4.0)
            parts.set_factor(factor)
            place_camera(parts, result, size, width)
            Render(view)
            path = os.path.join(directory, picture_name(name, result, i, t))
            tmp = path + ".tmp.png"
            if not SaveScreenshot(tmp, view, ImageResolution=list(size), TransparentBackground=0):
                raise OSError("cannot write %s" % path)
            os.replace(tmp, path)
            listing["pictures"].append({"view": name, "time": t, "file": os.path.basename(path),
                                        "vertical_exaggeration": factor, "width_um": width})
            print("wrote %s" % path)
    tmp = os.path.join(directory, "pictures.json.tmp")
    with open(tmp, "w", encoding="utf-8") as f:
        json.dump(listing, f, indent=1)
    os.replace(tmp, os.path.join(directory, "pictures.json"))


def main(argv):
    # The camera is placed by the views, not by ParaView's first render.
    paraview.simple._DisableFirstRenderCameraReset()
    here = os.path.dirname(os.path.abspath(globals().get("__file__", SCRIPT_NAME)))
    parser = argparse.ArgumentParser(prog=SCRIPT_NAME, description="ParaView views of a backcomb result")
    parser.add_argument("folder", nargs="?", default=here, help="a solve or sweep folder (default: %(default)s)")
    parser.add_argument("--pictures", metavar="DIR", help="write PNG pictures of both views per case into DIR")
    parser.add_argument("--size", default="1600x560", help="picture size in pixels, WIDTHxHEIGHT")
    args = parser.parse_args(argv)
    try:
        size = [int(v) for v in args.size.lower().split("x")]
        if len(size) != 2 or min(size) < 100:
            raise ValueError
    except ValueError:
        parser.error("--size must be WIDTHxHEIGHT with both at least 100, not '%s'" % args.size)
    try:
        result = Result(args.folder)
    except NotAResult as e:
        print("%s: %s" % (SCRIPT_NAME, e), file=sys.stderr)
        return 2
    views = [("collection", collection_view(result, size))]
    if result.max_power:
        views.append(("splitting", splitting_view(result, size)))
    scene = GetAnimationScene()
    scene.UpdateAnimationUsingDataTimeSteps()
    print("%s: %s %s, %d time step(s), vertical scale x%g"
          % (SCRIPT_NAME, result.kind, result.folder, max(1, len(result.times())), result.factor))
    if args.pictures:
        try:
            write_pictures(result, views, args.pictures, size)
        except OSError as e:
            print("%s: %s" % (SCRIPT_NAME, e), file=sys.stderr)
            return 4
        for _, parts in views:
            parts.set_factor(result.factor)
            place_camera(parts, result, size)
    SetActiveView(views[0][1].view)
    return 0


# In the ParaView window (paraview --script=...) sys.argv holds ParaView's
# own arguments: only the views are built there.
if os.path.basename(sys.argv[0] if sys.argv else "") == SCRIPT_NAME or __name__ == "__main__":
    code = main(sys.argv[1:] if sys.argv and sys.argv[0].endswith(".py") else [])
    if code != 0:
        sys.exit(code)
