"""Colours and type for every eddyphone figure and report.

A palette of our own, chosen so that the four cycle states and the five
mechanisms stay apart for readers with protan, deutan or tritan colour vision
(checked in ``tests/test_report_palette.py`` by simulating each deficiency and
measuring CIE 1976 colour differences). Figures also never rely on colour alone:
states carry their names in a legend strip, mechanisms are labelled in words.

Public API
----------
STATE_COLOURS, MECHANISM_COLOURS, INK, MUTED, PAPER, GRID, ACCENT, ENVELOPE
energy_colormap() -> matplotlib colormap for spectrograms and beat ensembles
figure_style() -> rcParams mapping for ``matplotlib.rc_context``
"""

from __future__ import annotations

from types import MappingProxyType

#: Near-black ink for text and waveforms.
INK = "#1d2430"
#: Secondary text, axes and ticks.
MUTED = "#5f6b7a"
#: Background of figures and of the HTML report.
PAPER = "#fbfaf6"
#: Grid lines.
GRID = "#dcd8cc"
#: Highlight for murmur windows and the murmur's own curves.
ACCENT = "#7b2fbf"
#: The envelope drawn over the waveform.
ENVELOPE = "#d9822b"

#: One colour per cycle state (labels as in ``segments.csv``).
STATE_COLOURS = MappingProxyType({
    "S1": "#1b4f9c",
    "systole": "#e9b949",
    "S2": "#b8432f",
    "diastole": "#9fb8c9",
})

#: Opacity of the state bands drawn behind waveforms.
BAND_ALPHA = 0.22

#: One colour per candidate mechanism (names as in ``Mechanism.name``).
MECHANISM_COLOURS = MappingProxyType({
    "high_flow": "#e08a2c",
    "narrowed_orifice": "#1f4e96",
    "low_viscosity": "#7fd1c0",
    "wall_irregularity": "#a8457e",
    "no_flow_disturbance": "#3d3a35",
})

#: Colour of a mechanism the palette does not know.
OTHER_MECHANISM = "#8a8a80"

#: Stops of the sequential energy map: paper-light (quiet) to ink-dark (loud).
#: Lightness falls monotonically, so the map reads the same in grey and for
#: every colour-vision type, and prints economically.
ENERGY_STOPS = ("#fbfaf6", "#d8e3e6", "#9fb8c9", "#4f7fae", "#1b4f9c", "#1d2430")


def energy_colormap():
    """Sequential colormap for spectrograms and the beat ensemble (quiet = light)."""
    from matplotlib.colors import LinearSegmentedColormap

    return LinearSegmentedColormap.from_list("eddyphone_energy", list(ENERGY_STOPS), N=256)


def mechanism_colour(name: str) -> str:
    """Colour of mechanism ``name`` (a neutral grey for unknown names)."""
    return MECHANISM_COLOURS.get(name, OTHER_MECHANISM)


def figure_style() -> dict[str, object]:
    """Matplotlib settings for print-size figures (use with ``matplotlib.rc_context``)."""
    return {
        "figure.facecolor": PAPER,
        "axes.facecolor": PAPER,
        "savefig.facecolor": PAPER,
        "axes.edgecolor": MUTED,
        "axes.labelcolor": INK,
        "axes.titlecolor": INK,
        "axes.titlesize": 9.5,
        "axes.titleweight": "bold",
        "axes.titlelocation": "left",
        "axes.labelsize": 8.5,
        "axes.spines.top": False,
        "axes.spines.right": False,
        "axes.grid": False,
        "grid.color": GRID,
        "grid.linewidth": 0.6,
        "xtick.color": MUTED,
        "ytick.color": MUTED,
        "xtick.labelcolor": INK,
        "ytick.labelcolor": INK,
        "xtick.labelsize": 7.5,
        "ytick.labelsize": 7.5,
        "legend.fontsize": 7.5,
        "legend.frameon": False,
        "font.family": "DejaVu Sans",
        "font.size": 8.5,
        "text.color": INK,
        "lines.linewidth": 0.9,
        "pdf.fonttype": 42,
        "svg.fonttype": "none",
    }
