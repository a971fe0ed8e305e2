"""Colour scales and line weights of the HTML map.

Two sequential scales, both readable by colour-blind users and in greyscale print because their
lightness changes monotonically and darker always means "more":

``UTILISATION``
    circuits, by utilisation = design current ÷ derated ampacity. matplotlib's *viridis*
    (van der Walt & Smith, 2015; perceptually uniform, designed for colour-vision deficiency),
    read from its light end at t = 15/19 down to its dark end at t = 0, so a lightly loaded
    circuit is light green and a fully loaded one dark purple. The palest part of viridis
    (yellow, t > 0.8) is left out: it hardly shows on a white page.
``FILL``
    trench segments, by fill = circuits ÷ maximum circuits. ColorBrewer *Blues*, 9 classes
    (Harrower & Brewer, 2003), from its second class (#deebf7) to its darkest (#08306b): a
    single hue, so it never looks like a circuit's colour or like the problem colour.

The review views (:data:`routeplan.map.script.REVIEW_SCRIPT`) recolour circuits in the page,
each over the range of values that occur (so that 76–96 % does not look all alike):

``UTILISATION``
    again, for "utilisation, spread";
``DROP_SHARE``
    voltage drop as a share of its limit. ColorBrewer *YlGnBu*, 9 classes (Harrower & Brewer,
    2003; marked colour-blind safe there), from its second class (#edf8b1) to its darkest
    (#081d58): light yellow-green to dark blue, lightness monotonic;
``STATUS_COLOURS``
    passing circuits Okabe–Ito *bluish green* #009E73, failing ones vermillion.

The placement map (:mod:`routeplan.map.placement`) colours candidate positions by objective:

``OBJECTIVE``
    viridis again, whole and reversed (t = 1 … 0): the smallest objective of the feasible
    candidates (the best) is yellow, the largest dark purple — darker is more cost or mass.
    Candidates are outlined in dark grey, so that the yellow end shows on a white page.

Problems use one colour that neither scale contains, *vermillion* #D55E00 from the Okabe–Ito
palette (Okabe & Ito, 2008, "Color Universal Design"), always together with a shape cue so that
greyscale print still shows it: a failing circuit has a dashed black outline; an over-capacity
trench segment sits on a wide, dashed (hatched) vermillion halo.

The plant view's block areas (:mod:`routeplan.map.plantview`) use the same colours: a block is
filled by its worst utilisation on ``UTILISATION``; a block holding a failing circuit is filled
vermillion with a dashed black outline and labelled with its number of failing circuits. The
keyboard focus ring of its label is Okabe–Ito *blue* #0072B2, a colour of neither scale.

Values outside [0, 1] are clamped; NaN gets ``NAN_COLOUR`` (mid grey, not on either scale).

References
----------
.. [1] S. van der Walt, N. Smith, "A better default colormap for Matplotlib", SciPy 2015.
.. [2] M. Harrower, C. A. Brewer, "ColorBrewer.org: an online tool for selecting colour schemes
   for maps", The Cartographic Journal 40(1), 2003.
.. [3] M. Okabe, K. Ito, "Color Universal Design (CUD): how to make figures and presentations
   that are friendly to colorblind people", 2008.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: matplotlib "viridis", 20 evenly spaced samples t = 0, 1/19, …, 1.
#: Source: branca 0.8 ``_schemes.json`` key "viridis" (a test compares the two).
VIRIDIS_20 = (
    "#440154", "#481567", "#482677", "#453781", "#404788", "#39568C", "#33638D",
    "#2D708E", "#287D8E", "#238A8D", "#1F968B", "#20A387", "#29AF7F", "#3CBB75",
    "#55C667", "#73D055", "#95D840", "#B8DE29", "#DCE319", "#FDE725",
)  # fmt: skip

#: ColorBrewer "Blues", 9 classes, light to dark.
#: Source: branca 0.8 ``_schemes.json`` key "Blues_09" (a test compares the two).
BLUES_9 = (
    "#f7fbff", "#deebf7", "#c6dbef", "#9ecae1", "#6baed6",
    "#4292c6", "#2171b5", "#08519c", "#08306b",
)  # fmt: skip

#: ColorBrewer "YlGnBu", 9 classes, light to dark.
#: Source: branca 0.8 ``_schemes.json`` key "YlGnBu_09" (a test compares the two).
YLGNBU_9 = (
    "#ffffd9", "#edf8b1", "#c7e9b4", "#7fcdbb", "#41b6c4",
    "#1d91c0", "#225ea8", "#253494", "#081d58",
)  # fmt: skip

#: Okabe–Ito "bluish green": passing circuits in the status view.
PASS_COLOUR = "#009E73"
#: Okabe–Ito "vermillion": failing circuits and over-capacity segments.
PROBLEM_COLOUR = "#D55E00"
#: Casing under a failing circuit.
CASING_COLOUR = "#000000"
#: Colour of a circuit or segment whose value is missing.
NAN_COLOUR = "#9E9E9E"


@dataclass(frozen=True)
class ColourScale:
    """A continuous colour scale: ``stops`` evenly spaced over [0, 1], linear between them.

    Parameters
    ----------
    name : str
        What the scale is, for the legend and the docs.
    stops : tuple of str
        ``#rrggbb`` colours at 0, 1/(n-1), …, 1.
    """

    name: str
    stops: tuple[str, ...]

    def colours(self, values) -> np.ndarray:
        """Colours of ``values`` (array-like of float), clamped to [0, 1], NaN → ``NAN_COLOUR``.

        Returns
        -------
        numpy.ndarray of str
            One ``#rrggbb`` per value.

        Examples
        --------
        >>> UTILISATION.colours([0.0, 1.0, 7.5, float("nan")]).tolist()
        ['#73d055', '#440154', '#440154', '#9e9e9e']
        """
        v = np.asarray(values, dtype=float).ravel()
        rgb = np.array([_hex_to_rgb(c) for c in self.stops], dtype=float)
        n = len(self.stops) - 1
        pos = np.clip(np.nan_to_num(v, nan=0.0), 0.0, 1.0) * n
        lo = np.minimum(np.floor(pos).astype(int), n - 1)
        frac = (pos - lo)[:, None]
        mixed = np.rint(rgb[lo] * (1.0 - frac) + rgb[lo + 1] * frac).astype(int)
        packed = (mixed[:, 0] << 16) | (mixed[:, 1] << 8) | mixed[:, 2]
        uniq, inverse = np.unique(packed, return_inverse=True)  # few distinct colours
        out = np.array([f"#{c:06x}" for c in uniq.tolist()], dtype=object)[inverse.reshape(-1)]
        out[np.isnan(v)] = NAN_COLOUR.lower()
        return out

    def colour(self, value: float) -> str:
        """Colour of one value; see :meth:`colours`."""
        return str(self.colours([value])[0])

    def css_gradient(self) -> str:
        """A CSS ``linear-gradient`` from 0 (left) to 1 (right), for the legend."""
        n = len(self.stops) - 1
        parts = ", ".join(f"{c} {100 * i / n:.1f}%" for i, c in enumerate(self.stops))
        return f"linear-gradient(to right, {parts})"


def _hex_to_rgb(colour: str) -> tuple[int, int, int]:
    c = colour.lstrip("#")
    return int(c[0:2], 16), int(c[2:4], 16), int(c[4:6], 16)


UTILISATION = ColourScale(
    "viridis (matplotlib), reversed, t = 0.79…0", tuple(reversed(VIRIDIS_20[:16]))
)
DROP_SHARE = ColourScale("YlGnBu (ColorBrewer, 9 classes), classes 2–9", YLGNBU_9[1:])
#: Colours of the status view, by status.
STATUS_COLOURS = {"ok": PASS_COLOUR, "fail": PROBLEM_COLOUR}
FILL = ColourScale("Blues (ColorBrewer, 9 classes), classes 2–9", BLUES_9[1:])
#: Candidates of a placement search (``placement.html``), by objective: viridis reversed, whole.
OBJECTIVE = ColourScale("viridis (matplotlib), reversed, t = 1…0", tuple(reversed(VIRIDIS_20)))


def circuit_weight(size_mm2, parallel) -> np.ndarray:
    """Line weight [px] of a circuit from its conductor cross-section.

    ``weight = 2 + 0.75·log2(A / 4 mm²)`` with ``A = size_mm2 × parallel`` [mm²], clamped to
    [2, 8] px; NaN → 2 px. 4 mm² → 2 px, 16 mm² → 3.5 px, 240 mm² → 6.4 px, 2 × 300 mm² → 7.4 px.
    The minimum of 2 px keeps every circuit visible and easy to hover.

    Examples
    --------
    >>> circuit_weight([4, 16, 240, 300, float("nan")], [1, 1, 1, 2, 1]).round(1).tolist()
    [2.0, 3.5, 6.4, 7.4, 2.0]
    """
    area = np.asarray(size_mm2, dtype=float) * np.asarray(parallel, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        w = 2.0 + 0.75 * np.log2(area / 4.0)
    return np.clip(np.nan_to_num(w, nan=2.0, neginf=2.0), 2.0, 8.0)
