"""One colour-blind-safe palette shared by the figures, the HTML and the layer styles.

Colours are the eight of Okabe & Ito, "Color Universal Design (CUD): how to make figures and
presentations that are friendly to colorblind people" (2008), designed to stay distinct under
protanopia, deuteranopia and tritanopia. Load cases are also told apart by line style, so no
meaning rests on hue alone.
"""
OKABE_ITO = {
    "orange": "#E69F00", "sky_blue": "#56B4E9", "bluish_green": "#009E73", "yellow": "#F0E442",
    "blue": "#0072B2", "vermillion": "#D55E00", "reddish_purple": "#CC79A7", "black": "#000000",
}
#: Load-case wires, in the order the cases appear.
CASE_COLOURS = [OKABE_ITO[k] for k in ("blue", "orange", "bluish_green", "reddish_purple", "sky_blue",
                                       "yellow")]
CASE_DASHES = ["solid", "dashed", "dashdot", "dotted", (0, (5, 1, 1, 1)), (0, (1, 1))]
VIOLATION = OKABE_ITO["vermillion"]
REQUIRED = OKABE_ITO["black"]
TERRAIN = "#7f6a4d"
SURFACE = "#9bbf8a"
#: Point-cloud objects (vegetation, buildings): darker than the surface-model fill and drawn as edged markers.
CLOUD_OBJECT = OKABE_ITO["bluish_green"]
UNKNOWN = "#bbbbbb"
STRUCTURE = OKABE_ITO["black"]
SPAN = "#555555"
#: Deficit classes [m] for violations and hotspots: light to severe.
DEFICIT_BREAKS_M = (0.0, 0.5, 1.5, 3.0)
DEFICIT_COLOURS = [OKABE_ITO["yellow"], OKABE_ITO["orange"], OKABE_ITO["vermillion"], OKABE_ITO["reddish_purple"]]


def case_colour(index: int) -> str:
    return CASE_COLOURS[index % len(CASE_COLOURS)]


def case_dash(index: int):
    return CASE_DASHES[index % len(CASE_DASHES)]


def deficit_colour(deficit_m: float) -> str:
    """Colour of a deficit [m]: the class whose lower break it reaches."""
    colour = DEFICIT_COLOURS[0]
    for lower, c in zip(DEFICIT_BREAKS_M, DEFICIT_COLOURS, strict=True):
        if deficit_m >= lower:
            colour = c
    return colour
