"""Colours, line widths and symbols of the figures, chosen once.

The colour map is viridis, perceptually uniform and readable by the common forms of colour
blindness (van der Walt and Smith 2015, the matplotlib colour-map design notes); its lightness
rises monotonically, so it also reads in greyscale. Everything that carries a warning is drawn
in black and white (casings, open symbols), never by hue alone; infill stretches get a wide
translucent neutral-grey halo under the track, closed by dark ticks across the track at their
ends, so that they read by lightness and shape, not by hue.
"""

from __future__ import annotations

#: Colour map of the dominant wavelength.
WAVELENGTH_CMAP = "viridis"
#: Figure size (inches) and resolution of the PNG (dots per inch): 1080 x 960 pixels.
FIGSIZE = (9.0, 8.0)
DPI = 120

#: Track pieces coloured by wavelength.
TRACK_WIDTH = 3.2
#: Opacity of pieces whose dominant harmonic is not above the red-noise background.
FADED_ALPHA = 0.3
#: Casing of pieces at aliasing risk: black under white dashes, wider than the track.
CASING_WIDTH = 7.5
CASING_DASHES = (0, (1.0, 1.0))
#: Segments that hold no window.
BARE_COLOUR = "#9a9a9a"
BARE_WIDTH = 1.2
#: Infill stretches (spacing coarser than the aliasing budget recommends): a neutral grey halo,
#: wider than the risk casing so that it shows around it, at this opacity (on white it blends
#: to about 71 % lightness, darker than the graticule and lighter than the bare segments), and
#: a dark tick across the track at each end of the stretch (size in points).
INFILL_COLOUR = "#5a5a5a"
INFILL_ALPHA = 0.45
INFILL_WIDTH = 15.0
INFILL_TICK_COLOUR = "#202020"
INFILL_TICK_SIZE = 20.0
INFILL_TICK_WIDTH = 1.6
#: Graticule.
GRATICULE_COLOUR = "#c8c8c8"
GRATICULE_WIDTH = 0.6

#: Open symbol of each aliasing reason and where along its piece it is placed (0 to 1).
REASON_MARKERS = {
    "spacing": ("^", 0.25),
    "rolloff": ("s", 0.5),
    "near-nyquist": ("D", 0.75),
}
MARKER_SIZE = 7.0
MARKER_EDGE = 1.3
#: Width of the white halo behind symbols and labels.
HALO = 3.0

TITLE_SIZE = 12
LABEL_SIZE = 8
CAPTION_SIZE = 7.5
