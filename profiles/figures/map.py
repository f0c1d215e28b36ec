"""The wavelength map: survey tracks coloured by the dominant wavelength of each window.

Drawn with matplotlib only (a bare :class:`matplotlib.figure.Figure`, rendered by Agg for PNG
and by the SVG backend), from a :class:`profiles.windows.WindowTable`; nothing spectral is
computed here.

- Projection: a transverse Mercator centred on the survey (scale true on its central
  meridian, under 0.1 % off within about 90 km of it), or the projected CRS in metres given
  as ``map_crs``. Longitudes are unwrapped around the centre, so a survey across the
  antimeridian is drawn in one piece.
- Each window stands for one piece of track, ``step`` long and centred on it
  (:meth:`~profiles.windows.WindowTable.piece_bounds`). All pieces form one
  ``LineCollection`` coloured by the dominant wavelength on a logarithmic scale (``LogNorm``,
  viridis). Pieces whose dominant harmonic is not above the red-noise background are faded;
  pieces at aliasing risk get a black-and-white dashed casing, and open symbols along them
  name the reasons (triangle: spacing; square: rolloff; diamond: near-nyquist). Segments too
  short for a window are thin grey lines; nothing is drawn across gaps.
- Infill stretches (``infill``, :class:`profiles.infill.InfillStretches`: spacing coarser than
  the aliasing budget recommends) lie on a wide translucent grey halo under the track, through
  their own stations, with a dark tick across the track at each end; the caption states the
  alias tolerance and the target wavelength.
- Frame: graticule of meridians and parallels (transformed into the map CRS, labelled where
  they meet the frame), scale bar in km, north arrow (true north at its foot), line names at
  line starts, a colour bar, a legend, a title and a caption with the settings.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from ..errors import InputError
from ..windows import WindowTable, track_paths
from . import style

if TYPE_CHECKING:
    from ..infill import InfillStretches

NICE_STEPS_DEG = (30.0, 20.0, 10.0, 5.0, 2.0, 1.0, 0.5, 0.25, 0.2, 0.1, 0.05, 0.02, 0.01, 0.005, 0.002, 0.001)


# --- projection ----------------------------------------------------------------------------------


def survey_centre(lon: np.ndarray, lat: np.ndarray) -> tuple[float, float]:
    """Centre (lon, lat) of the bounding box of positions, longitudes taken the short way."""
    lon = np.asarray(lon, dtype=float)
    reference = float(lon[0])
    relative = (lon - reference + 180.0) % 360.0 - 180.0
    centre = reference + 0.5 * (relative.min() + relative.max())
    return (centre + 180.0) % 360.0 - 180.0, 0.5 * (float(np.min(lat)) + float(np.max(lat)))


def check_map_crs(map_crs: str):
    """The pyproj CRS of a ``--map-crs`` value, which must be projected and in metres.

    Raises
    ------
    InputError
        For an unknown CRS, or one that is geographic or not in metres.
    """
    from pyproj import CRS
    from pyproj.exceptions import CRSError

    try:
        crs = CRS.from_user_input(map_crs)
    except CRSError:
        raise InputError(f"--map-crs: unknown CRS {map_crs!r}; expected e.g. EPSG:32711") from None
    units = {axis.unit_name.lower() for axis in crs.axis_info}
    if not crs.is_projected or not units <= {"metre", "meter"}:
        raise InputError(
            f"--map-crs: {map_crs!r} is not a projected CRS in metres; give one such as EPSG:32711"
        )
    return crs


def map_crs_for(lon: np.ndarray, lat: np.ndarray, map_crs: str | None = None):
    """The CRS of the map: ``map_crs`` if given (projected, in metres), else a transverse
    Mercator centred on the survey (WGS84, scale 1 on the central meridian)."""
    from pyproj import CRS

    if map_crs is not None:
        return check_map_crs(map_crs)
    lon0, lat0 = survey_centre(lon, lat)
    return CRS.from_proj4(
        f"+proj=tmerc +lat_0={lat0:.6f} +lon_0={lon0:.6f} +k=1 +x_0=0 +y_0=0 +ellps=WGS84 +units=m +no_defs"
    )


def _describe(crs) -> str:
    if crs.name and crs.name != "unknown":
        return crs.name
    params = {p.name: p.value for p in crs.coordinate_operation.params} if crs.coordinate_operation else {}
    lon0 = params.get("Longitude of natural origin")
    lat0 = params.get("Latitude of natural origin")
    if lon0 is None or lat0 is None:
        return "transverse Mercator"
    return f"transverse Mercator centred {_degrees(lon0, 'lon', 3)} {_degrees(lat0, 'lat', 3)}"


def _degrees(value: float, kind: str, decimals: int) -> str:
    if kind == "lon":
        value = (value + 180.0) % 360.0 - 180.0
        hemisphere = "E" if value > 0 else "W" if value < 0 else ""
    else:
        hemisphere = "N" if value > 0 else "S" if value < 0 else ""
    return f"{abs(value):.{decimals}f}°{hemisphere}"


# --- drawing -------------------------------------------------------------------------------------


def draw_map(
    windows: WindowTable,
    *,
    field: str,
    map_crs: str | None = None,
    title: str | None = None,
    infill: InfillStretches | None = None,
):
    """Draw the wavelength map of a window table; return the matplotlib Figure.

    Parameters
    ----------
    windows : WindowTable
        From :func:`profiles.windows.along_track_windows`; its ``tracks`` are drawn.
    field : str
        Name of the field analysed (title and caption).
    map_crs : str, optional
        Projected CRS in metres; a transverse Mercator centred on the survey by default.
    title : str, optional
        Title; "Dominant wavelength along track: FIELD" by default.
    infill : InfillStretches, optional
        From :func:`profiles.infill.infill_stretches`: stretches spaced more coarsely than the
        aliasing budget recommends, drawn on a grey halo with end ticks; the caption then
        states the budget's alias tolerance and target wavelength.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.collections import LineCollection
    from matplotlib.colors import LogNorm
    from matplotlib.figure import Figure
    from pyproj import Transformer

    tracks = windows.tracks
    all_lon = np.concatenate([t.lon for t in tracks])
    all_lat = np.concatenate([t.lat for t in tracks])
    crs = map_crs_for(all_lon, all_lat, map_crs)
    forward = Transformer.from_crs("EPSG:4326", crs, always_xy=True)
    centre_lon, _ = survey_centre(all_lon, all_lat)

    def project(path: np.ndarray) -> np.ndarray:
        lon = centre_lon + (path[:, 0] - centre_lon + 180.0) % 360.0 - 180.0
        lon = np.unwrap(lon, period=360.0)
        x, y = forward.transform(lon, path[:, 1])
        return np.column_stack([x, y])

    figure = Figure(figsize=style.FIGSIZE, dpi=style.DPI)
    FigureCanvasAgg(figure)  # the Agg canvas: no pyplot state, no display
    axes = figure.add_axes((0.08, 0.24, 0.72, 0.68))
    axes.set_facecolor("white")

    whole = [project(np.column_stack([t.lon, t.lat])) for t in tracks]
    has_window = np.zeros(len(tracks), bool)
    has_window[np.unique(windows.track)] = True
    bare = [path for path, used in zip(whole, has_window, strict=True) if not used]
    if bare:
        axes.add_collection(
            LineCollection(bare, colors=style.BARE_COLOUR, linewidths=style.BARE_WIDTH, zorder=2,
                           gid="no-window"),
            autolim=True,
        )
    if infill is not None and len(infill):
        _infill(axes, [project(path) for path in infill.paths])
    collection = None
    if len(windows):
        low, high = windows.piece_bounds()
        pieces = [project(p) for p in track_paths(tracks, windows.track, low, high)]
        wavelength_km = np.asarray(windows.dominant_wavelength, dtype=float) / 1e3
        vmin, vmax = float(np.min(wavelength_km)), float(np.max(wavelength_km))
        if not vmax > vmin * 1.0001:
            vmin, vmax = vmin / 1.25, vmax * 1.25
        risky = np.flatnonzero(windows.aliasing_risk)
        if risky.size:
            casing = [pieces[i] for i in risky]
            axes.add_collection(LineCollection(casing, colors="black", linewidths=style.CASING_WIDTH,
                                               capstyle="butt", zorder=3, gid="risk-casing"))
            axes.add_collection(LineCollection(casing, colors="white", linewidths=style.CASING_WIDTH,
                                               linestyles=[style.CASING_DASHES], capstyle="butt",
                                               zorder=3.1, gid="risk-dashes"))
        # A white bed, so that faded pieces blend with white everywhere, casing or not.
        axes.add_collection(LineCollection(pieces, colors="white", linewidths=style.TRACK_WIDTH,
                                           capstyle="butt", zorder=3.5, gid="track-bed"))
        collection = LineCollection(pieces, cmap=style.WAVELENGTH_CMAP, norm=LogNorm(vmin=vmin, vmax=vmax),
                                    linewidths=style.TRACK_WIDTH, capstyle="butt", zorder=4,
                                    gid="track")
        collection.set_array(wavelength_km)
        collection.set_alpha(np.where(windows.red_noise_significant, 1.0, style.FADED_ALPHA))
        axes.add_collection(collection, autolim=True)
        _reason_markers(axes, windows, pieces)
    for path in whole:  # the data limits cover every track, drawn or not
        axes.update_datalim(path)
    axes.autoscale_view()
    extent = _frame_extent(axes, figure)
    axes.set_xlim(extent[0], extent[1])
    axes.set_ylim(extent[2], extent[3])
    axes.set_aspect("equal", adjustable="box")
    _graticule(axes, crs, extent, centre_lon)
    _line_names(axes, tracks, whole)
    _scale_bar(axes, extent)
    _north_arrow(axes, crs, extent, forward)
    _colour_bar(figure, collection)
    _legend(figure, windows, infill)
    _title_and_caption(figure, windows, field=field, title=title, crs=crs, infill=infill)
    return figure


def render(figure, file_format: str) -> bytes:
    """The map as PNG or SVG bytes (:func:`profiles.figures.render.figure_bytes`), with a
    fixed SVG hash salt and text as paths so that the same input gives the same bytes."""
    import matplotlib

    from .render import figure_bytes

    with matplotlib.rc_context({"svg.hashsalt": "profiles-map", "svg.fonttype": "path"}):
        return figure_bytes(figure, file_format)


def _frame_extent(axes, figure) -> tuple[float, float, float, float]:
    """Data limits with a 6 % margin, widened to the axes' shape so that x and y share a scale."""
    (x0, x1), (y0, y1) = axes.get_xlim(), axes.get_ylim()
    width, height = max(x1 - x0, 1.0), max(y1 - y0, 1.0)
    x0, x1 = x0 - 0.06 * width, x1 + 0.06 * width
    y0, y1 = y0 - 0.06 * height, y1 + 0.06 * height
    box = axes.get_position()
    fig_w, fig_h = figure.get_size_inches()
    shape = (box.height * fig_h) / (box.width * fig_w)
    width, height = x1 - x0, y1 - y0
    if height / width < shape:
        grow = 0.5 * (shape * width - height)
        y0, y1 = y0 - grow, y1 + grow
    else:
        grow = 0.5 * (height / shape - width)
        x0, x1 = x0 - grow, x1 + grow
    return x0, x1, y0, y1


def _reason_markers(axes, windows: WindowTable, pieces: list[np.ndarray]) -> None:
    """Open symbols along each piece at risk, one per reason, with a white halo."""
    from matplotlib import patheffects

    flags = {"spacing": windows.spacing_risk, "rolloff": windows.rolloff_risk,
             "near-nyquist": windows.near_nyquist_risk}
    halo = [patheffects.withStroke(linewidth=style.HALO, foreground="white")]
    for reason, (marker, where) in style.REASON_MARKERS.items():
        chosen = np.flatnonzero(flags[reason])
        if chosen.size == 0:
            continue
        points = np.array([_along(pieces[i], where) for i in chosen])
        axes.plot(points[:, 0], points[:, 1], linestyle="none", marker=marker, markersize=style.MARKER_SIZE,
                  markerfacecolor="none", markeredgecolor="black", markeredgewidth=style.MARKER_EDGE,
                  path_effects=halo, zorder=6)


def _infill(axes, paths: list[np.ndarray]) -> None:
    """A translucent grey halo under each infill stretch, and a dark tick across the track at
    each of its ends (a marker turned to the track's direction there)."""
    from matplotlib.collections import LineCollection
    from matplotlib.markers import MarkerStyle
    from matplotlib.transforms import Affine2D

    paths = [path for path in paths if path.shape[0] >= 2]
    if not paths:
        return
    axes.add_collection(LineCollection(paths, colors=style.INFILL_COLOUR, alpha=style.INFILL_ALPHA,
                                       linewidths=style.INFILL_WIDTH, capstyle="butt", joinstyle="round",
                                       zorder=1.5, gid="infill-halo"))
    for path in paths:
        for end, inward in ((path[0], path[1]), (path[-1], path[-2])):
            dx, dy = inward - end
            angle = math.degrees(math.atan2(dy, dx)) if (dx or dy) else 0.0
            # "|" is upright: turned by the track's angle it stands across the track.
            tick = MarkerStyle("|", transform=Affine2D().rotate_deg(angle))
            axes.plot([end[0]], [end[1]], linestyle="none", marker=tick, markersize=style.INFILL_TICK_SIZE,
                      markeredgecolor=style.INFILL_TICK_COLOUR, markeredgewidth=style.INFILL_TICK_WIDTH,
                      zorder=5, gid="infill-tick")


def _along(path: np.ndarray, fraction: float) -> np.ndarray:
    """The point a fraction of the way along a polyline (by length in map units)."""
    length = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(path, axis=0).T))])
    if length[-1] == 0:
        return path[0]
    target = fraction * length[-1]
    return np.array([np.interp(target, length, path[:, 0]), np.interp(target, length, path[:, 1])])


def _nice_degree_step(span: float) -> float:
    for step in NICE_STEPS_DEG:
        if span / step >= 3.0:
            return step
    return NICE_STEPS_DEG[-1]


def _graticule(axes, crs, extent, centre_lon: float) -> None:
    """Meridians and parallels in the map CRS, labelled where they cross the lower and left frame."""
    from pyproj import Transformer

    x0, x1, y0, y1 = extent
    inverse = Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    forward = Transformer.from_crs("EPSG:4326", crs, always_xy=True)
    edge = np.linspace(0.0, 1.0, 60)
    bx = np.concatenate([x0 + (x1 - x0) * edge, np.full(60, x1), x1 - (x1 - x0) * edge, np.full(60, x0)])
    by = np.concatenate([np.full(60, y0), y0 + (y1 - y0) * edge, np.full(60, y1), y1 - (y1 - y0) * edge])
    lon, lat = inverse.transform(bx, by)
    lon = centre_lon + (np.asarray(lon) - centre_lon + 180.0) % 360.0 - 180.0
    lon_min, lon_max = float(np.min(lon)), float(np.max(lon))
    lat_min, lat_max = max(float(np.min(lat)), -89.9), min(float(np.max(lat)), 89.9)
    lon_step = _nice_degree_step(lon_max - lon_min)
    lat_step = _nice_degree_step(lat_max - lat_min)
    decimals = {"lon": _decimals(lon_step), "lat": _decimals(lat_step)}
    dense_lat = np.linspace(lat_min, lat_max, 200)
    dense_lon = np.linspace(lon_min, lon_max, 200)
    xticks, xlabels, yticks, ylabels = [], [], [], []
    for meridian in np.arange(math.ceil(lon_min / lon_step) * lon_step, lon_max, lon_step):
        x, y = forward.transform(np.full(200, meridian), dense_lat)
        axes.plot(x, y, color=style.GRATICULE_COLOUR, linewidth=style.GRATICULE_WIDTH, zorder=1)
        crossing = _crossing(np.asarray(x), np.asarray(y) - y0)
        if crossing is not None and x0 <= crossing <= x1:
            xticks.append(crossing)
            xlabels.append(_degrees(meridian, "lon", decimals["lon"]))
    for parallel in np.arange(math.ceil(lat_min / lat_step) * lat_step, lat_max, lat_step):
        x, y = forward.transform(dense_lon, np.full(200, parallel))
        axes.plot(x, y, color=style.GRATICULE_COLOUR, linewidth=style.GRATICULE_WIDTH, zorder=1)
        crossing = _crossing(np.asarray(y), np.asarray(x) - x0)
        if crossing is not None and y0 <= crossing <= y1:
            yticks.append(crossing)
            ylabels.append(_degrees(parallel, "lat", decimals["lat"]))
    axes.set_xticks(xticks, xlabels, fontsize=style.LABEL_SIZE)
    axes.set_yticks(yticks, ylabels, fontsize=style.LABEL_SIZE)
    axes.set_xlim(x0, x1)
    axes.set_ylim(y0, y1)


def _decimals(step: float) -> int:
    return max(0, -math.floor(math.log10(step) + 1e-9)) + (1 if step in (0.25, 0.025, 0.0025) else 0)


def _crossing(along: np.ndarray, offset: np.ndarray) -> float | None:
    """Value of ``along`` where ``offset`` changes sign (first crossing), interpolated."""
    sign = np.sign(offset)
    change = np.flatnonzero(sign[:-1] * sign[1:] <= 0)
    if change.size == 0:
        return None
    i = int(change[0])
    if offset[i + 1] == offset[i]:
        return float(along[i])
    fraction = -offset[i] / (offset[i + 1] - offset[i])
    return float(along[i] + fraction * (along[i + 1] - along[i]))


def _line_names(axes, tracks, whole: list[np.ndarray]) -> None:
    """Each line's name just before its first station, with a white halo."""
    from matplotlib import patheffects

    halo = [patheffects.withStroke(linewidth=style.HALO, foreground="white")]
    seen = set()
    for track, path in zip(tracks, whole, strict=True):
        if track.line in seen:
            continue
        seen.add(track.line)
        ahead = path[min(5, len(path) - 1)] - path[0]
        norm = math.hypot(*ahead) or 1.0
        offset = -12.0 * ahead / norm
        axes.annotate(track.line, xy=tuple(path[0]), xytext=tuple(offset), textcoords="offset points",
                      ha="center", va="center", fontsize=style.LABEL_SIZE, fontweight="bold",
                      path_effects=halo, zorder=7, annotation_clip=False)


def _scale_bar(axes, extent) -> None:
    """A two-part black and white bar in the lower left, labelled in km."""
    from matplotlib.patches import Rectangle

    x0, x1, y0, y1 = extent
    target = 0.2 * (x1 - x0) / 1e3
    magnitude = 10.0 ** math.floor(math.log10(target))
    length_km = max(m * magnitude for m in (1.0, 2.0, 5.0) if m * magnitude <= target)
    length = length_km * 1e3
    left, bottom = x0 + 0.05 * (x1 - x0), y0 + 0.05 * (y1 - y0)
    height = 0.012 * (y1 - y0)
    axes.add_patch(Rectangle((left - 0.01 * (x1 - x0), bottom - 0.015 * (y1 - y0)), length + 0.02 * (x1 - x0),
                             height + 0.06 * (y1 - y0), facecolor="white", edgecolor="none", alpha=0.8,
                             zorder=8))
    for part, colour in ((0, "black"), (1, "white")):
        axes.add_patch(Rectangle((left + part * length / 2, bottom), length / 2, height, facecolor=colour,
                                 edgecolor="black", linewidth=0.8, zorder=9))
    for where, text in ((0.0, "0"), (0.5, f"{length_km / 2:g}"), (1.0, f"{length_km:g} km")):
        axes.text(left + where * length, bottom + height * 1.6, text, ha="center", va="bottom",
                  fontsize=style.LABEL_SIZE, zorder=9)


def _north_arrow(axes, crs, extent, forward) -> None:
    """An arrow pointing to true north at its foot, in the upper right corner."""
    from pyproj import Transformer

    x0, x1, y0, y1 = extent
    foot = np.array([x1 - 0.07 * (x1 - x0), y1 - 0.16 * (y1 - y0)])
    inverse = Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    lon, lat = inverse.transform(foot[0], foot[1])
    step = 0.01 if lat < 89.0 else -0.01
    nx, ny = forward.transform(lon, lat + step)
    direction = np.array([nx - foot[0], ny - foot[1]]) * (1 if step > 0 else -1)
    direction /= math.hypot(*direction)
    tip = foot + direction * 0.08 * (y1 - y0)
    axes.annotate("", xy=tuple(tip), xytext=tuple(foot),
                  arrowprops={"arrowstyle": "-|>,head_length=0.8,head_width=0.4", "color": "black",
                              "linewidth": 1.6}, zorder=9)
    axes.text(*(tip + direction * 0.025 * (y1 - y0)), "N", ha="center", va="center", fontsize=10,
              fontweight="bold", zorder=9)


def _colour_bar(figure, collection) -> None:
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullLocator

    if collection is None:
        return
    cax = figure.add_axes((0.84, 0.34, 0.022, 0.5))
    bar = figure.colorbar(collection, cax=cax)
    bar.set_label("dominant wavelength (km)", fontsize=style.LABEL_SIZE + 1)
    vmin, vmax = collection.norm.vmin, collection.norm.vmax
    ticks = _log_ticks(vmin, vmax)
    bar.ax.yaxis.set_major_locator(FixedLocator(ticks))
    bar.ax.yaxis.set_major_formatter(FuncFormatter(lambda value, _: f"{value:g}"))
    bar.ax.yaxis.set_minor_locator(NullLocator())
    bar.ax.tick_params(labelsize=style.LABEL_SIZE)


def _log_ticks(vmin: float, vmax: float) -> list[float]:
    """Round values (1, 1.5, 2, 2.5, 3, 4, 5, 6, 7, 8 times powers of ten) in [vmin, vmax], thinned."""
    values = []
    for power in range(math.floor(math.log10(vmin)) - 1, math.ceil(math.log10(vmax)) + 1):
        for mantissa in (1.0, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0):
            value = float(f"{mantissa * 10.0 ** power:.6g}")
            if vmin <= value <= vmax:
                values.append(value)
    while len(values) > 7:
        values = values[::2]
    if len(values) < 2:
        values = sorted({float(f"{vmin:.3g}"), float(f"{vmax:.3g}")} | set(values))
    return values


def _legend(figure, windows: WindowTable, infill=None) -> None:
    from matplotlib import colormaps
    from matplotlib.legend_handler import HandlerTuple
    from matplotlib.lines import Line2D

    colour = colormaps[style.WAVELENGTH_CMAP](0.6)
    track = Line2D([], [], color=colour, linewidth=style.TRACK_WIDTH, solid_capstyle="butt")
    faded = Line2D([], [], color=colour, alpha=style.FADED_ALPHA, linewidth=style.TRACK_WIDTH,
                   solid_capstyle="butt")
    casing = (
        Line2D([], [], color="black", linewidth=style.CASING_WIDTH, solid_capstyle="butt"),
        Line2D([], [], color="white", linewidth=style.CASING_WIDTH, linestyle=style.CASING_DASHES,
               dash_capstyle="butt"),
        Line2D([], [], color=colour, linewidth=style.TRACK_WIDTH, solid_capstyle="butt"),
    )
    alpha = windows.settings.alpha
    handles = [track, faded, casing]
    labels = [
        f"peak above red noise (AR(1), alpha {alpha:g})",
        "no peak above red noise (faded)",
        "window at aliasing risk (chequered casing)",
    ]
    if len(windows.tracks) > len(np.unique(windows.track)):
        handles.append(Line2D([], [], color=style.BARE_COLOUR, linewidth=style.BARE_WIDTH))
        labels.append("segment shorter than the window")
    if infill is not None and len(infill):
        handles.append((
            Line2D([], [], color=style.INFILL_COLOUR, alpha=style.INFILL_ALPHA, linewidth=style.INFILL_WIDTH,
                   solid_capstyle="butt"),
            Line2D([], [], color=colour, linewidth=style.TRACK_WIDTH, solid_capstyle="butt"),
        ))
        labels.append("infill: spacing coarser than recommended")
    meanings = {
        "spacing": "spacing: station step above half the target wavelength",
        "rolloff": "rolloff: variance piled up below the local Nyquist",
        "near-nyquist": (
            f"near-nyquist: peak within {windows.settings.near_nyquist_factor:g} x the local "
            f"Nyquist wavelength"
        ),
    }
    for reason, (marker, _) in style.REASON_MARKERS.items():
        handles.append(Line2D([], [], linestyle="none", marker=marker, markersize=style.MARKER_SIZE,
                              markerfacecolor="none", markeredgecolor="black",
                              markeredgewidth=style.MARKER_EDGE))
        labels.append(meanings[reason])
    figure.legend(handles, labels, loc="lower left", bbox_to_anchor=(0.07, 0.085), ncol=2, frameon=False,
                  fontsize=style.LABEL_SIZE, handlelength=3.0, handler_map={tuple: HandlerTuple(ndivide=1)})


def _title_and_caption(figure, windows: WindowTable, *, field: str, title: str | None, crs,
                       infill=None) -> None:
    settings = windows.settings
    figure.text(0.08, 0.955, title or f"Dominant wavelength along track: {field}", fontsize=style.TITLE_SIZE,
                fontweight="bold", ha="left", va="bottom")
    target = (
        "none given"
        if settings.shortest_wavelength is None
        else f"{settings.shortest_wavelength / 1e3:g} km"
    )
    lines = [
        f"Field {field}; window {settings.window / 1e3:g} km, step {settings.step / 1e3:g} km; target "
        f"shortest wavelength {target}; significance level {settings.alpha:g}.",
        f"Peaks tested against an AR(1) red-noise background. Map: {_describe(crs)}; scale true "
        f"near the centre.",
    ]
    if infill is not None:
        lines.append(_infill_caption(infill))
    lines.append("Aliasing audit, not for navigation.")
    top = 0.011 + 0.018 * (len(lines) - 1)
    for row, text in enumerate(lines):
        figure.text(0.08, top - 0.018 * row, text, fontsize=style.CAPTION_SIZE, ha="left", va="bottom")


def _infill_caption(infill) -> str:
    """The caption's sentence on the aliasing budget: tolerance, target, what the halo marks."""
    head = (
        f"Aliasing budget ({infill.model} fall-off): alias tolerance {infill.tolerance:g} of the true "
        f"power at {infill.shortest_wavelength / 1e3:g} km; "
    )
    if not len(infill):
        return head + "no infill stretch."
    return head + f"infill stretches (grey halo, end ticks): {len(infill)}."
