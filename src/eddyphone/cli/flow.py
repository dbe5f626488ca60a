"""``eddyphone flow``: a blood-flow calculator (Reynolds number, viscosity, jets, Strouhal).

Give any of the options; every quantity they allow is computed and explained in a
sentence. Clinical units on the command line, SI inside :mod:`eddyphone.physics`.
"""

from __future__ import annotations

import argparse

NAME = "flow"
HELP = (
    "blood-flow calculator: Reynolds number and regime, viscosity from hematocrit, "
    "Bernoulli jet pressure drop, Strouhal noise frequency"
)
ORDER = 60

_PRESETS = ("normal-adult-aorta",)

_EPILOG = """examples:
  eddyphone flow --velocity-m-s 1.2 --diameter-mm 25 --viscosity-mpa-s 3.5
  eddyphone flow --flow-l-min 5 --diameter-mm 25 --hematocrit 0.45
  eddyphone flow --diameter-um 100 --hematocrit 0.45
  eddyphone flow --jet-velocity-m-s 4
  eddyphone flow --frequency-hz 200 --velocity-m-s 3
  eddyphone flow --preset normal-adult-aorta
"""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the calculator's options (units always in the option name)."""
    parser.epilog = _EPILOG
    parser.formatter_class = argparse.RawDescriptionHelpFormatter
    g = parser.add_argument_group("vessel (give two of velocity, flow, diameter)")
    g.add_argument("--velocity-m-s", type=float, metavar="V",
                   help="mean velocity in the vessel (or the jet, for --frequency-hz), m/s")
    g.add_argument("--flow-l-min", type=float, metavar="Q", help="volume flow, L/min")
    d = g.add_mutually_exclusive_group()
    d.add_argument("--diameter-mm", type=float, metavar="D", help="lumen diameter, mm")
    d.add_argument("--diameter-um", type=float, metavar="D",
                   help="lumen diameter, micrometres (small vessels)")
    g.add_argument("--length-mm", type=float, metavar="L",
                   help="segment length for Poiseuille resistance, mm")
    g.add_argument("--heart-rate-bpm", type=float, metavar="HR",
                   help="heart rate for the Womersley number, beats/min")
    b = parser.add_argument_group("blood (give viscosity or hematocrit; default hematocrit 0.45)")
    b.add_argument("--viscosity-mpa-s", type=float, metavar="MU",
                   help="whole-blood viscosity, mPa s")
    b.add_argument("--hematocrit", type=float, metavar="H",
                   help="hematocrit as a fraction, 0-0.8 (e.g. 0.45)")
    b.add_argument("--plasma-viscosity-mpa-s", type=float, metavar="MU", default=1.2,
                   help="plasma viscosity at 37 degC, mPa s (default 1.2)")
    b.add_argument("--density-kg-m3", type=float, metavar="RHO",
                   help="blood density, kg/m3 (default 1060)")
    j = parser.add_argument_group("jet through a narrowing")
    j.add_argument("--jet-velocity-m-s", type=float, metavar="V2",
                   help="peak jet velocity, m/s (gives the Bernoulli pressure drop)")
    j.add_argument("--proximal-velocity-m-s", type=float, metavar="V1",
                   help="velocity upstream of the jet, m/s (default neglected)")
    j.add_argument("--orifice-diameter-mm", type=float, metavar="D",
                   help="jet (orifice) diameter, mm")
    j.add_argument("--frequency-hz", type=float, metavar="F",
                   help="dominant murmur frequency, Hz (Strouhal scaling)")
    j.add_argument("--strouhal", type=float, metavar="ST",
                   help="Strouhal number for f = St v / d (default 1.0)")
    parser.add_argument("--preset", choices=_PRESETS,
                        help="fill unset vessel values from a reference site")
    parser.add_argument("--json", action="store_true", help="print JSON instead of a table")


_OPTIONS = (
    "velocity_m_s", "flow_l_min", "diameter_mm", "diameter_um", "length_mm",
    "heart_rate_bpm", "viscosity_mpa_s", "plasma_viscosity_mpa_s", "density_kg_m3",
    "jet_velocity_m_s", "orifice_diameter_mm", "frequency_hz", "strouhal",
)


def _check_options(args: argparse.Namespace) -> None:
    import math

    from eddyphone.errors import ParameterError

    for name in _OPTIONS:
        value = getattr(args, name)
        if value is not None and not (math.isfinite(value) and value > 0):
            option = "--" + name.replace("_", "-")
            raise ParameterError(f"{option} {value:g} is not allowed; give a number above 0")
    v1 = args.proximal_velocity_m_s
    if v1 is not None and not (math.isfinite(v1) and v1 >= 0):
        raise ParameterError(f"--proximal-velocity-m-s {v1:g} is not allowed; give 0 or more")


def _si_inputs(args: argparse.Namespace) -> dict:
    def scaled(value: float | None, factor: float) -> float | None:
        return None if value is None else value * factor

    kw = {
        "velocity_m_s": args.velocity_m_s,
        "flow_m3_s": scaled(args.flow_l_min, 1e-3 / 60.0),
        "diameter_m": scaled(args.diameter_mm, 1e-3)
        if args.diameter_um is None
        else args.diameter_um * 1e-6,
        "length_m": scaled(args.length_mm, 1e-3),
        "heart_rate_hz": scaled(args.heart_rate_bpm, 1.0 / 60.0),
        "viscosity_pa_s": scaled(args.viscosity_mpa_s, 1e-3),
        "hematocrit": args.hematocrit,
        "plasma_viscosity_pa_s": args.plasma_viscosity_mpa_s * 1e-3,
        "density_kg_m3": args.density_kg_m3,
        "jet_velocity_m_s": args.jet_velocity_m_s,
        "proximal_velocity_m_s": args.proximal_velocity_m_s,
        "orifice_diameter_m": scaled(args.orifice_diameter_mm, 1e-3),
        "frequency_hz": args.frequency_hz,
    }
    if args.strouhal is not None:
        kw["strouhal"] = args.strouhal
    return kw


def _apply_preset(kw: dict, preset: str) -> str:
    from eddyphone.physics.sites import NORMAL_ADULT_AORTA

    site = {"normal-adult-aorta": NORMAL_ADULT_AORTA}[preset]
    if kw["velocity_m_s"] is None and kw["flow_m3_s"] is None:
        kw["velocity_m_s"] = site.peak_velocity_m_s
    if kw["diameter_m"] is None and not (kw["velocity_m_s"] and kw["flow_m3_s"]):
        kw["diameter_m"] = site.diameter_m
    if kw["heart_rate_hz"] is None:
        kw["heart_rate_hz"] = site.heart_rate_hz
    if kw["viscosity_pa_s"] is None and kw["hematocrit"] is None:
        kw["hematocrit"] = site.hematocrit
    return (
        f"Preset {preset}: {site.name}; unset values taken from it "
        f"(peak velocity {site.peak_velocity_m_s:g} m/s, diameter {site.diameter_m * 1e3:g} mm, "
        f"heart rate {site.heart_rate_hz * 60:g}/min, hematocrit {site.hematocrit:g})."
    )


def _format_value(value: object) -> str:
    if isinstance(value, str):
        return value
    x = float(value)  # type: ignore[arg-type]
    if x == 0:
        return "0"
    if abs(x) >= 1000:
        return f"{x:,.0f}"
    if abs(x) >= 100:
        return f"{x:.0f}"
    if abs(x) >= 0.01:
        return f"{x:.3g}"
    return f"{x:.3g}"


def _table(result: dict) -> str:
    import textwrap

    keys = list(result["meanings"])
    labels = result["labels"]
    width = max(len(labels[k]) for k in keys)
    lines = ["Flow physics (eddyphone flow)", ""]
    for k in keys:
        value = _format_value(result[k])
        unit = result["units"][k]
        lines.append(f"  {labels[k]:<{width}}  {value:>10} {unit}".rstrip())
        lines.extend(textwrap.wrap(result["meanings"][k], width=88, initial_indent="      ",
                                   subsequent_indent="      "))
    for title in ("assumptions", "cautions"):
        if result[title]:
            lines += ["", f"{title.capitalize()}:"]
            for item in result[title]:
                lines.extend(textwrap.wrap(item, width=88, initial_indent="  - ",
                                           subsequent_indent="    "))
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    """Compute and print the flow quantities the options allow."""
    import json

    from eddyphone.errors import ParameterError
    from eddyphone.physics.describe import describe_flow

    _check_options(args)
    kw = _si_inputs(args)
    preset_note = _apply_preset(kw, args.preset) if args.preset else None
    result = describe_flow(**kw)
    if not result["meanings"]:
        raise ParameterError(
            "nothing to compute from these options; give for example --velocity-m-s and "
            "--diameter-mm, or --jet-velocity-m-s (see eddyphone flow --help)"
        )
    if preset_note:
        result["assumptions"].insert(0, preset_note)
    if args.json:
        print(json.dumps(result, indent=2))
    else:
        print(_table(result))
    return 0
