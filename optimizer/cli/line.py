"""``strainline line``: impedance, width synthesis and loss of one transmission line.

    strainline line KIND [--width-um W] [--gap-um G] --height-um H [--height-top-um H2] --thickness-um T
                    --er ER [--er-top ER2] [--cover-um C --cover-er ERC] [--freq-ghz F] [--df DF]
                    [--roughness-um RQ] [--target-ohm Z] [--no-bottom-ground] [--json]
    KIND: microstrip | stripline | coupled-microstrip | coupled-stripline | coplanar

The module is kept simple on purpose: :func:`geometry_from_args` builds the ``LineGeometry`` from
the parsed options, :func:`solve_or_evaluate` gets the width and the line result, and
:func:`build_result` builds the JSON dict (other options, such as a field-solver check, can add
keys to it).
"""
from __future__ import annotations

import argparse
import json
import math
from typing import Any

import numpy as np

from strainline.models.lines import (
    GAP_KINDS,
    LINE_KINDS,
    PAIR_KINDS,
    LineGeometry,
    LineResult,
    evaluate_line,
    method_findings,
    methods_used,
    range_findings,
    solve_width,
)
from strainline.models.loss import LineLoss, delay_ps_per_mm, line_loss
from strainline.models.units import GHZ, SIGMA_COPPER, UM
from strainline.optimizer.cli.numbers import check
from strainline.optimizer.errors import InputError, not_one_of

#: Width search range for --target-ohm, um.
WIDTH_MIN_UM = 10.0
WIDTH_MAX_UM = 2000.0

CAUTION = (
    "Estimates for concept work from published closed-form equations: verify with the fabricator's "
    "impedance modelling and test coupons, and with flex testing (IPC-TM-650 methods); defer to "
    "IPC-2223/IPC-6013 and licensed engineering practice."
)

_STRIPLINES = ("stripline", "coupled-stripline")
_COVERABLE = ("microstrip", "coupled-microstrip", "coplanar")


def _kind(text: str) -> str:
    if text not in LINE_KINDS:
        raise argparse.ArgumentTypeError(not_one_of(None, text, LINE_KINDS, InputError).message)
    return text


def register(subparsers) -> argparse.ArgumentParser:
    p = subparsers.add_parser(
        "line",
        help="impedance, width for a target impedance, and loss of one line (closed-form equations)",
        description="Characteristic impedance (or the width for a target impedance), effective permittivity, "
                    "loss and delay of one line from published closed-form equations. Estimates for concept "
                    "work: verify with the fabricator's impedance modelling and coupons.",
    )
    p.add_argument("kind", metavar="KIND", type=_kind, help=" | ".join(LINE_KINDS))
    p.add_argument("--width-um", type=float, default=None, metavar="W", help="trace width, um (> 0)")
    p.add_argument("--gap-um", type=float, default=None, metavar="G",
                   help="edge-to-edge gap of a pair, or the coplanar slot, um (> 0)")
    p.add_argument("--height-um", type=float, required=True, metavar="H",
                   help="dielectric between the trace's bottom face and the plane below, um (> 0)")
    p.add_argument("--height-top-um", type=float, default=None, metavar="H2",
                   help="stripline: dielectric between the trace's top face and the plane above, um "
                        "(default: --height-um)")
    p.add_argument("--thickness-um", type=float, required=True, metavar="T", help="copper thickness, um (>= 0)")
    p.add_argument("--er", type=float, required=True, metavar="ER",
                   help="relative permittivity below the trace (>= 1; composite for stacked dielectrics)")
    p.add_argument("--er-top", type=float, default=None, metavar="ER2",
                   help="stripline: relative permittivity above the trace (default: --er)")
    p.add_argument("--cover-um", type=float, default=None, metavar="C",
                   help="cover dielectric above the trace's top face, um (>= 0; fills beside the trace)")
    p.add_argument("--cover-er", type=float, default=None, metavar="ERC", help="cover relative permittivity (>= 1)")
    p.add_argument("--freq-ghz", type=float, default=None, metavar="F",
                   help="frequency, GHz (> 0): dispersion (microstrip), loss and delay")
    p.add_argument("--df", type=float, default=None, metavar="DF",
                   help="loss tangent of the dielectric (0 <= DF < 1; default 0 = no dielectric loss)")
    p.add_argument("--roughness-um", type=float, default=None, metavar="RQ",
                   help="RMS copper roughness, um (>= 0; default 0 = smooth)")
    p.add_argument("--target-ohm", type=float, default=None, metavar="Z",
                   help="solve the width for this impedance (Z0; pairs: differential), ohm (> 0)")
    p.add_argument("--no-bottom-ground", action="store_true",
                   help="coplanar: no ground plane under the substrate")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--field-solve", action="store_true",
                   help="also solve the cross-section with the 2-D field solver (with --target-ohm: "
                        "the field-solved width); adds the object 'field'")
    p.add_argument("--hatch-pitch-um", type=float, default=None, metavar="P",
                   help="also solve the line over a hatched reference plane of this pitch (3-D field "
                        "solver; with --hatch-width-um); adds the object 'hatch'")
    p.add_argument("--hatch-width-um", type=float, default=None, metavar="W",
                   help="copper width of the hatch lines, um")
    p.add_argument("--hatch-angle-deg", type=float, default=None, metavar="A",
                   help="hatch angle to the trace: 45 (default) or 90 degrees")
    return p


def geometry_from_args(args: argparse.Namespace) -> tuple[LineGeometry, list[str]]:
    """Validate the options and build the (one-row) ``LineGeometry`` in SI units.

    Returns the geometry (``width_m`` nan when a target is to be solved) and the findings about
    options that do not apply to this line type. Raises :class:`InputError` for bad input.
    """
    kind = args.kind
    for option in ("--height-um", "--thickness-um", "--er", "--width-um", "--gap-um", "--height-top-um", "--er-top",
                   "--cover-um", "--cover-er", "--freq-ghz", "--df", "--roughness-um", "--target-ohm"):
        check(getattr(args, option[2:].replace("-", "_")), option)
    if args.width_um is None and args.target_ohm is None:
        raise InputError("give the trace width (--width-um W, > 0 um) or a target impedance "
                         "(--target-ohm Z, > 0 ohm) to solve for it", "--width-um")
    if args.width_um is not None and args.target_ohm is not None:
        raise InputError("give either --width-um or --target-ohm (the target replaces the width), not both",
                         "--target-ohm")
    if kind in GAP_KINDS and args.gap_um is None:
        what = "edge-to-edge gap of the pair" if kind in PAIR_KINDS else "slot between the trace and its side grounds"
        raise InputError(f"{kind} needs --gap-um G, the {what}, um (> 0)", "--gap-um")
    cover_given = args.cover_um is not None and args.cover_um > 0
    if cover_given and args.cover_er is None and kind in _COVERABLE:
        raise InputError("a cover needs its relative permittivity: --cover-er ERC (>= 1)", "--cover-er")

    not_applicable(args)
    ignored: list[str] = []

    stripline_like = kind in _STRIPLINES
    geom = LineGeometry(
        width_m=np.nan if args.width_um is None else args.width_um * UM,
        gap_m=np.nan if (args.gap_um is None or kind not in GAP_KINDS) else args.gap_um * UM,
        height_m=args.height_um * UM,
        height_top_m=(args.height_top_um if args.height_top_um is not None else args.height_um) * UM
        if stripline_like else np.nan,
        thickness_m=args.thickness_um * UM,
        er=args.er,
        er_top=(args.er_top if args.er_top is not None else args.er) if stripline_like else np.nan,
        cover_m=(args.cover_um * UM if cover_given and kind in _COVERABLE else 0.0),
        cover_er=(args.cover_er if (cover_given and kind in _COVERABLE) else 1.0),
        bottom_ground=not args.no_bottom_ground,
    )
    return geom, ignored


def not_applicable(args: argparse.Namespace) -> None:
    """Refuse an option the chosen line type does not use (one line naming it, exit 2)."""
    kind = args.kind
    cover_given = args.cover_um is not None and args.cover_um > 0
    if kind not in GAP_KINDS and args.gap_um is not None:
        raise InputError(f"{kind} has no gap; --gap-um applies to {', '.join(GAP_KINDS)}", "--gap-um")
    if kind not in _STRIPLINES:
        for opt, val in (("--height-top-um", args.height_top_um), ("--er-top", args.er_top)):
            if val is not None:
                raise InputError(f"{kind} has no dielectric above the trace; {opt} applies to "
                                 f"{', '.join(_STRIPLINES)} (a cover is --cover-um/--cover-er)", opt)
    if kind not in _COVERABLE and (cover_given or args.cover_er is not None):
        opt = "--cover-um" if cover_given else "--cover-er"
        raise InputError(f"{kind} has no cover; the dielectric above a stripline is --height-top-um/--er-top", opt)
    if kind in _COVERABLE and args.cover_er is not None and args.cover_um is None:
        raise InputError("a cover permittivity needs the cover's thickness: give --cover-um C as well (>= 0 um)",
                         "--cover-er")
    if kind != "coplanar" and args.no_bottom_ground:
        raise InputError(f"{kind} always has its ground plane below; --no-bottom-ground applies to coplanar",
                         "--no-bottom-ground")
    if args.freq_ghz is None:
        for opt, val in (("--df", args.df), ("--roughness-um", args.roughness_um)):
            if val is not None:
                raise InputError("the loss needs a frequency: give --freq-ghz F as well", opt)


_RATIO_OPTIONS = {"w": "--width-um", "h": "--height-um", "s": "--gap-um", "t": "--thickness-um", "er": "--er"}


def no_valid_result(kind: str, geom: LineGeometry, result: LineResult) -> InputError:
    """The error for a geometry the closed forms give no finite result for: the ratios out of
    range (from :func:`range_findings`) and the options that set them."""
    import re

    found = [f for f in range_findings(kind, geom, result) if "outside" in f or "above" in f or "below" in f]
    opts: list[str] = []
    for f in found:
        for token in re.findall(r"\b(w|h|s|t|er)(?:/(w|h|s|t))?\b", f):
            for t in token:
                if t and _RATIO_OPTIONS[t] not in opts:
                    opts.append(_RATIO_OPTIONS[t])
    why = "; ".join(found) if found else "the geometry is degenerate"
    fix = f"; change {', '.join(opts)}" if opts else ""
    return InputError(f"the closed-form equations give no valid result for this geometry ({why}){fix}", kind)


def _finite(*arrays: Any) -> bool:
    return all(a is None or bool(np.all(np.isfinite(np.asarray(a, float)))) for a in arrays)


def solve_or_evaluate(kind: str, geom: LineGeometry, target_ohm: float | None,
                      freq_hz: float | None) -> tuple[LineGeometry, LineResult]:
    """Solve the width for ``target_ohm`` (when given) and evaluate the line.

    An unreachable target raises :class:`InputError` naming the impedance range reachable with
    widths of 10-2000 um.
    """
    if target_ohm is not None:
        w, ok = solve_width(kind, target_ohm, geom, WIDTH_MIN_UM * UM, WIDTH_MAX_UM * UM, freq_hz=freq_hz)
        if not bool(ok[0]):
            ends = evaluate_line(kind, geom.with_(width_m=np.array([WIDTH_MAX_UM, WIDTH_MIN_UM]) * UM), freq_hz)
            z = ends.target_ohm
            what = "differential impedance" if kind in PAIR_KINDS else "impedance"
            if np.all(np.isfinite(z)):
                reach = f"the reachable {what} is {z[0]:.2f} to {z[1]:.2f} ohm"
            else:
                reach = "no width in the range gives a valid line"
            raise InputError(
                f"{target_ohm:g} ohm cannot be reached with widths {WIDTH_MIN_UM:g} to {WIDTH_MAX_UM:g} um: {reach}",
                "--target-ohm")
        geom = geom.with_(width_m=w[0])
    return geom, evaluate_line(kind, geom, freq_hz)


def _num(x: Any, digits: int = 6) -> float | None:
    v = float(np.asarray(x).reshape(-1)[0])
    return round(v, digits) if math.isfinite(v) else None


def build_result(args: argparse.Namespace, geom: LineGeometry, result: LineResult,
                 loss: LineLoss | None, extra_findings: list[str]) -> dict[str, Any]:
    """The JSON object of ``strainline line --json`` (lengths in um, impedance in ohm)."""
    kind = args.kind
    freq_hz = None if args.freq_ghz is None else args.freq_ghz * GHZ
    out: dict[str, Any] = {
        "kind": kind,
        "width_um": _num(geom.width_m / UM),
        "width_solved": args.target_ohm is not None,
        "gap_um": _num(geom.gap_m / UM) if kind in GAP_KINDS else None,
        "z0_ohm": _num(result.z0_ohm),
        "eps_eff": _num(result.eps_eff),
    }
    if args.target_ohm is not None:
        out["target_ohm"] = args.target_ohm
    if kind in PAIR_KINDS:
        out.update({
            "z_odd_ohm": _num(result.z_odd_ohm), "z_even_ohm": _num(result.z_even_ohm),
            "z_diff_ohm": _num(result.z_diff_ohm), "z_common_ohm": _num(result.z_common_ohm),
            "eps_eff_odd": _num(result.eps_eff_odd), "eps_eff_even": _num(result.eps_eff_even),
        })
    out["delay_ps_per_mm"] = _num(delay_ps_per_mm(result.eps_eff))
    if loss is not None:
        out["freq_ghz"] = args.freq_ghz
        out["loss_db_per_m"] = {"conductor": _num(loss.conductor_db_per_m), "dielectric": _num(loss.dielectric_db_per_m),
                                "total": _num(loss.total_db_per_m)}
        out["loss_db_per_inch"] = {"conductor": _num(loss.conductor_db_per_inch),
                                   "dielectric": _num(loss.dielectric_db_per_inch),
                                   "total": _num(loss.total_db_per_inch)}
        out["skin_depth_um"] = _num(loss.skin_depth_m / UM, 4)
        out["roughness_factor"] = _num(loss.roughness_factor)
    h2, er2 = geom.resolved_top()
    out["inputs"] = {
        "height_um": _num(geom.height_m / UM),
        "height_top_um": _num(h2 / UM) if kind in _STRIPLINES else None,
        "thickness_um": _num(geom.thickness_m / UM),
        "er": _num(geom.er), "er_top": _num(er2) if kind in _STRIPLINES else None,
        "cover_um": _num(geom.cover_m / UM), "cover_er": _num(geom.cover_er) if float(geom.cover_m) > 0 else None,
        "bottom_ground": bool(geom.bottom_ground) if kind == "coplanar" else None,
        "df": args.df, "roughness_um": args.roughness_um,
    }
    out["in_range"] = bool(np.asarray(result.in_range).reshape(-1)[0])
    method = methods_used(kind, geom, freq_hz)
    if loss is not None:
        method += ["Wheeler 1942 incremental-inductance rule (conductor loss, on the closed-form air impedance)",
                   "Hammerstad & Bekkadal 1975 roughness factor",
                   "filling-factor dielectric loss weighted by electric-energy fractions (Pozar)"]
    out["method"] = method
    out["findings"] = (extra_findings + range_findings(kind, geom, result, freq_hz)
                       + method_findings(kind, geom, freq_hz))
    out["caution"] = CAUTION
    return out


def format_text(d: dict[str, Any]) -> str:
    """The readable (non-JSON) summary."""
    def f(v: Any, fmt: str = ".2f") -> str:
        return "-" if v is None else format(v, fmt)

    lines = [f"{d['kind']}: width {f(d['width_um'], '.2f')} um" + (" (solved for "
             f"{d['target_ohm']:g} ohm)" if d.get("width_solved") else "")
             + (f", gap {f(d['gap_um'])} um" if d.get("gap_um") is not None else "")]
    lines.append(f"  Z0 {f(d['z0_ohm'])} ohm" + (" (one line alone)" if "z_diff_ohm" in d else "")
                 + f", eps_eff {f(d['eps_eff'], '.4f')}" + (" (odd mode)" if "z_diff_ohm" in d else "")
                 + f", delay {f(d['delay_ps_per_mm'], '.3f')} ps/mm")
    if "z_diff_ohm" in d:
        lines.append(f"  Zdiff {f(d['z_diff_ohm'])} ohm, Zcommon {f(d['z_common_ohm'])} ohm, "
                     f"Zodd {f(d['z_odd_ohm'])} ohm, Zeven {f(d['z_even_ohm'])} ohm")
    if "loss_db_per_m" in d:
        lm, li = d["loss_db_per_m"], d["loss_db_per_inch"]
        lines.append(f"  loss at {d['freq_ghz']:g} GHz: conductor {f(lm['conductor'], '.3f')}, dielectric "
                     f"{f(lm['dielectric'], '.3f')}, total {f(lm['total'], '.3f')} dB/m "
                     f"({f(li['total'], '.4f')} dB/inch)")
    lines.append("  method: " + "; ".join(d["method"]))
    for item in d["findings"]:
        lines.append(f"  finding: {item}")
    lines.append(f"  caution: {d['caution']}")
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    kind = args.kind
    geom, findings = geometry_from_args(args)
    freq_hz = None if args.freq_ghz is None else args.freq_ghz * GHZ
    geom, result = solve_or_evaluate(kind, geom, args.target_ohm, freq_hz)
    pair = kind in PAIR_KINDS
    if not _finite(result.z0_ohm, result.eps_eff, *((result.z_odd_ohm, result.z_even_ohm, result.z_diff_ohm,
                                                      result.eps_eff_odd, result.eps_eff_even) if pair else ())):
        raise no_valid_result(kind, geom, result)
    loss = None
    if freq_hz is not None:
        rq = 0.0 if args.roughness_um is None else args.roughness_um * UM
        loss = line_loss(kind, geom, result, freq_hz, 0.0 if args.df is None else args.df, rq, SIGMA_COPPER)
        if args.df is None:
            findings.append("no --df given: dielectric loss not included (loss tangent 0)")
        if args.roughness_um is None:
            findings.append("no --roughness-um given: smooth copper assumed (roughness factor 1)")
        if bool(np.asarray(loss.thin_conductor).reshape(-1)[0]):
            findings.append("copper thinner than 3 skin depths: skin-effect conductor loss not valid; "
                            "the DC resistance is used as a floor")
        findings.append("conductor loss uses annealed-copper conductivity 5.80e7 S/m (IEC 60028)")
        if loss.wheeler_failed is not None and bool(np.asarray(loss.wheeler_failed).reshape(-1)[0]):
            findings.append("conductor loss: the closed-form impedance does not rise as the walls recede here "
                            "(outside its range), so Wheeler's rule does not hold; the parallel-plate estimate "
                            "Rs/(Z0 w) is used (Pozar)")
        if not _finite(loss.conductor_db_per_m, loss.dielectric_db_per_m):
            raise no_valid_result(kind, geom, result)
    d = build_result(args, geom, result, loss, findings)
    if args.field_solve:
        from strainline.optimizer.search.verify import field_for_line, field_text
        d["field"] = field_for_line(kind, geom, args.target_ohm, d.get("z_diff_ohm", d["z0_ohm"]),
                                    (WIDTH_MIN_UM, WIDTH_MAX_UM))
    from strainline.optimizer.search.hatchline import (
        hatch_for_line,
        hatch_from_args,
        hatch_text,
    )
    hatch = hatch_from_args(args.hatch_pitch_um, args.hatch_width_um, args.hatch_angle_deg,
                            float(geom.thickness_m))
    if hatch is not None:
        from strainline.optimizer.search.fieldcache import FieldCache
        cache = FieldCache()
        try:
            d["hatch"] = hatch_for_line(kind, geom, hatch, args.target_ohm, freq_hz, cache)
        finally:
            cache.close()
    if args.json:
        print(json.dumps(d, indent=2))
    else:
        print(format_text(d) + ("\n" + field_text(d["field"]) if args.field_solve else "")
              + ("\n" + hatch_text(d["hatch"]) if hatch is not None else ""))
    return 0
