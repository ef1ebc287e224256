"""``strainline bend``: strain in every layer of one stackup bent at a given inner radius.

    strainline bend STACKUP.yaml --inner-radius-mm R [--inside bottom|top] [--motion flat-to-bent|reversed]
                    [--plane-strain] [--plastic] [--json] [--use install|dynamic] [--cycles N]
                    [--elongation-fraction F] [--allow-uncovered]

An option that does not apply to the chosen use is an error (one line, exit 2), never ignored:
``--cycles`` and ``--allow-uncovered`` need ``--use dynamic``.
"""
from __future__ import annotations

import argparse
import json
import math
from typing import Any

from strainline.optimizer.cli.numbers import number
from strainline.optimizer.errors import InputError
from strainline.optimizer.search.bend_report import INSIDES, MOTIONS, PLASTIC_SHIFT, USES, bend_report
from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.inputs.stackup_file import load_stackup


def _positive_mm(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number; give a radius > 0 mm") from None
    if not (math.isfinite(v) and v > 0):
        raise argparse.ArgumentTypeError(f"{text!r} is out of range; the inner radius must be > 0 mm")
    return v


def _cycles(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number; give a life >= 1 cycle") from None
    if not (math.isfinite(v) and 1 <= v <= 1e12):   # the study's bend.cycles range
        raise argparse.ArgumentTypeError(f"{text!r} is out of range; the target life must be >= 1 and <= 1e12 "
                                         "cycles")
    return v


def _fraction(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number; allowed (0, 1]") from None
    if not (math.isfinite(v) and 0 < v <= 1):
        raise argparse.ArgumentTypeError(f"{text!r} is out of range; allowed (0, 1]")
    return v


def register(subparsers) -> argparse.ArgumentParser:
    p = subparsers.add_parser(
        "bend",
        help="strain in every layer of one stackup at a bend, copper fatigue life and design-rule findings",
        description="Bend one stackup (YAML, layers top to bottom) at an inner radius and report the neutral axis, "
                    "the strain at every layer face, copper cycles to failure (Engelmaier) and design-rule findings. "
                    "Estimates for concept work: verify with the fabricator and with flex testing.",
    )
    p.add_argument("stackup", metavar="STACKUP.yaml", help="stackup file (format: README.md, 'Bend mechanics')")
    p.add_argument("--inner-radius-mm", required=True, type=number("--inner-radius-mm"), metavar="R",
                   help="radius of the inner (mandrel) face of the bend, mm")
    p.add_argument("--inside", choices=INSIDES, default="bottom", help="which face is inside the bend (default bottom)")
    p.add_argument("--motion", choices=MOTIONS, default="flat-to-bent",
                   help="bend cycle for fatigue: flat-to-bent (range = peak) or reversed (range = 2 x peak)")
    p.add_argument("--plane-strain", action="store_true", help="use E/(1-nu^2) for every layer (wide strip)")
    p.add_argument("--plastic", action="store_true", default=None,
                   help="also solve with elastic-perfectly-plastic copper (neutral axis from force balance); "
                        "done anyway whenever copper passes yield")
    p.add_argument("--use", choices=USES, default="install",
                   help="one-time install bend or dynamic flexing (strain limit and ratio rules; default install)")
    p.add_argument("--cycles", type=_cycles, default=None,
                   help="target life for the dynamic strain limit (default 1e6)")
    p.add_argument("--elongation-fraction", type=_fraction, default=0.5, metavar="F",
                   help="share of each dielectric's elongation at break allowed (default 0.5)")
    p.add_argument("--allow-uncovered", action="store_true",
                   help="dynamic use: waive the rule that every leaf face carries a cover")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--catalog", metavar="PATH", default=None,
                   help="catalog folder the stackup's materials come from (default: the built-in catalog)")
    return p


def _f(v: Any, fmt: str) -> str:
    return "-" if v is None else format(v, fmt)


def format_table(rep: dict[str, Any]) -> str:
    """The readable (non-JSON) output."""
    lines = []
    na = rep["neutral_axis_um"]
    na_txt = f"{na:.2f} um" if not isinstance(na, list) else ", ".join(f"{x:.2f}" for x in na) + " um (per leaf, top to bottom)"
    lines.append(f"stackup {rep['stackup']!r}: {rep['total_thickness_um']:.1f} um, "
                 f"{'bonded' if rep['bonded'] else 'unbonded (air gaps)'}")
    lines.append(f"bend: inner radius {rep['inner_radius_mm']:g} mm, {rep['inside']} face inside, "
                 f"R/T = {rep['radius_to_thickness']:.1f}, {rep['use']} use, motion {rep['motion']}"
                 + (", plane strain" if rep["plane_strain"] else ""))
    lines.append(f"neutral axis (from the bottom face): {na_txt}")
    lines.append("strain: % engineering strain, tension +, at the top and bottom face of each layer")
    head = f"{'layer':<34} {'kind':<10} {'t um':>7} {'E_eff GPa':>9} {'top %':>8} {'bottom %':>8} {'cycles':>10}"
    lines.append(head)
    lines.append("-" * len(head))
    for x in rep["layers"]:
        cyc = x.get("cycles_to_failure", None) if x["kind"] == "copper" else None
        cyc_txt = ("inf" if x["kind"] == "copper" and cyc is None else _f(cyc, ".3g"))
        lines.append(f"{x['name'][:34]:<34} {x['kind']:<10} {x['thickness_um']:7.1f} {x['effective_modulus_gpa']:9.2f} "
                     f"{_f(x['strain_top_pct'], '+8.3f'):>8} {_f(x['strain_bottom_pct'], '+8.3f'):>8} {cyc_txt:>10}")
    if rep["peak_copper_layer"] is not None:
        lines.append(f"peak copper strain: {rep['peak_copper_strain_pct']:+.3f} % in {rep['peak_copper_layer']}")
    b = rep["min_radius_basis"]
    lines.append(f"min inner radius for {_f(b['strain_limit_pct'], '.3g')} % copper strain ({b['basis']}; "
                 f"{b['source']}): {rep['min_radius_mm']:.3f} mm")
    if len(rep["leaves"]) > 1:
        lines.append("leaves (top to bottom): axis from the bottom face, nested inner radius, peak strain")
        for k, lf in enumerate(rep["leaves"]):
            lines.append(f"  leaf {k + 1} [{lf['layers'][0]} .. {lf['layers'][-1]}]: {lf['thickness_um']:.1f} um, "
                         f"axis {lf['neutral_axis_um']:.2f} um, R {lf['inner_radius_mm']:.4g} mm, peak "
                         f"{_f(lf.get('peak_strain_pct'), '.3f')} %, copper {_f(lf.get('peak_copper_strain_pct'), '.3f')} %")
    if "plastic" in rep:
        p = rep["plastic"]
        pna = p["neutral_axis_um"]
        pna_txt = f"{pna:.2f}" if not isinstance(pna, list) else ", ".join(f"{v:.2f}" for v in pna)
        lines.append(f"elastic-perfectly-plastic copper: neutral axis {pna_txt} um, peak copper strain "
                     + (f"{p['peak_copper_strain_pct']:+.3f} % in {p['peak_copper_layer']}"
                        if p["peak_copper_layer"] is not None else "-")
                     + (f" (moves the peak {p['peak_shift_pct']:.1f} %, the axis {p['axis_shift_pct']:.1f} % of its "
                        f"leaf; warning above {100 * PLASTIC_SHIFT:g} %)" if "peak_shift_pct" in p else ""))
    if rep.get("material_limits"):
        lines.append("material limits:")
        for m in rep["material_limits"]:
            state = "ok" if m["ok"] else "OVER"
            if m["check"] == "strain":
                lines.append(f"  {state:<4} {m['layer'][:34]:<34} strain {m['value_pct']:.3f} % of {m['limit_pct']:.3f} % "
                             f"({m['basis']})")
            elif m["check"] == "min_radius":
                lines.append(f"  {state:<4} {m['layer'][:34]:<34} radius {m['value_mm']:.3g} mm, needs >= "
                             f"{m['limit_mm']:.3g} mm")
            else:
                lines.append(f"  {state:<4} {m['check']}: {m['basis']} ({m['layer']})")
    if rep["findings"]:
        lines.append("findings:")
        for f in rep["findings"]:
            lines.append(f"  [{f['severity']}] {f['code']}: {f['message']} ({f['source']})")
    lines.append(f"caution: {rep['caution']}")
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    for opt, value in (("--cycles", args.cycles), ("--allow-uncovered", args.allow_uncovered or None)):
        if value is not None and args.use != "dynamic":
            raise InputError(f"applies to dynamic use only; add --use dynamic or drop {opt}", opt)
    catalog = load_catalog(getattr(args, "catalog", None))
    stackup = load_stackup(args.stackup, catalog)
    rep = bend_report(stackup, args.inner_radius_mm, inside=args.inside, motion=args.motion,
                      plane_strain=args.plane_strain, plastic=args.plastic, use=args.use, cycles=args.cycles,
                      elongation_fraction=args.elongation_fraction, allow_uncovered=args.allow_uncovered,
                      catalog=catalog)
    if args.json:
        print(json.dumps(rep, indent=2, allow_nan=False))
    else:
        print(format_table(rep))
    return 0
