"""``strainline catalog``: list the materials, copper foils, foil weights and fabrication capability.

::

    strainline catalog [--json] [--section dielectrics|coverlays|foils|weights|fabrication]
                       [--catalog DIR]

Without ``--json`` it prints aligned tables (units in the column headers) and the sources, and ends
with a one-line caution; with ``--json`` one JSON object in the catalog's own edge units (the
YAML field names) plus ``caution``.
"""
from __future__ import annotations

import argparse
import json
import textwrap
from collections.abc import Sequence
from typing import Any

from strainline.optimizer.inputs.catalog import CAUTION, SECTIONS, Catalog, load_catalog
from strainline.optimizer.errors import InputError, not_one_of

_WRAP = 100


def register(subparsers: Any) -> argparse.ArgumentParser:
    """Add the ``catalog`` subcommand to ``subparsers`` and return its parser."""
    p = subparsers.add_parser(
        "catalog",
        help="list the materials, copper foils, foil weights and fabrication capability",
        description="List the material catalog: dielectrics, coverlays, copper foils, foil weights "
        "and fabrication capability, each value with its source. The values are typical "
        "figures for concept work, to be replaced by the fabricator's material set.",
    )
    p.add_argument("--json", action="store_true", help="print one JSON object instead of tables")
    p.add_argument(
        "--section",
        metavar="SECTION",
        help=f"list only one section: {', '.join(SECTIONS)}",
    )
    p.add_argument(
        "--catalog",
        metavar="DIR",
        help="a folder with materials.yaml, copper.yaml and fabrication.yaml (default: the shipped catalog); "
        "a file saying 'mode: add' adds its entries to the built-in ones",
    )
    return p


def run(args: argparse.Namespace) -> int:
    """Print the catalog (or one section of it); 0 on success."""
    section = args.section
    if section is not None and section not in SECTIONS:
        raise not_one_of("--section", section, SECTIONS, InputError)
    catalog = load_catalog(args.catalog)
    sections = (section,) if section else SECTIONS
    if args.json:
        full = catalog.to_dict()
        out = {name: full[name] for name in sections}
        out["caution"] = CAUTION
        print(json.dumps(out, indent=2))
    else:
        if args.catalog is not None:   # say what the user catalog did to the built-in one
            said = {"added": "added to the built-in entries", "replaced": "replaces the built-in file",
                    "built-in": "built-in (not in the folder)"}
            print(f"Catalog {args.catalog}: " + "; ".join(f"{name} {said.get(how, how)}"
                                                        for name, how in catalog.origin.items()) + "\n")
        print(render_text(catalog, sections))
    return 0


# --------------------------------------------------------------------------------------------
# text rendering
# --------------------------------------------------------------------------------------------
def _g(x: float) -> str:
    return f"{x:g}"


def table(headers: Sequence[str], rows: Sequence[Sequence[Any]]) -> str:
    """Aligned plain-text table: text columns left-aligned, number columns right-aligned."""
    numeric = [
        all(isinstance(r[i], (int, float)) and not isinstance(r[i], bool) for r in rows) if rows else False
        for i in range(len(headers))
    ]
    cells = [[_g(r[i]) if numeric[i] else str(r[i]) for i in range(len(headers))] for r in rows]
    widths = [max([len(h)] + [len(r[i]) for r in cells]) for i, h in enumerate(headers)]

    def line(values: Sequence[str]) -> str:
        parts = [v.rjust(w) if numeric[i] else v.ljust(w) for i, (v, w) in enumerate(zip(values, widths))]
        return "  ".join(parts).rstrip()

    rule = "  ".join("-" * w for w in widths)
    return "\n".join([line(headers), rule, *(line(r) for r in cells)])


def _sources(items: Sequence[tuple[str, str]]) -> str:
    lines = ["Sources:"]
    for name, src in items:
        lines.append(textwrap.fill(src, _WRAP, initial_indent=f"  {name}: ", subsequent_indent="      "))
    return "\n".join(lines)


def _dielectrics(d: dict[str, Any]) -> str:
    rows = [
        [
            k, v["family"], v["modulus_gpa"], v["poisson"], v["dk"], v["df"], v["dk_freq_ghz"],
            v["elongation_pct"], "yes" if v["glass_reinforced"] else "no",
            ", ".join(_g(t) for t in v["thicknesses_um"]), v["thickness_tolerance_pct"],
        ]
        for k, v in d.items()
    ]
    head = ["name", "family", "E (GPa)", "nu", "Dk", "Df", "at (GHz)", "elong. (%)", "glass",
            "thicknesses (um)", "thick. tol. (+/-%)"]
    return "\n\n".join(["DIELECTRICS", table(head, rows), _sources([(k, v["source"]) for k, v in d.items()])])


def _coverlays(d: dict[str, Any]) -> str:
    rows = [
        [k, v["film"], v["adhesive"], ", ".join(f"{_g(a)}/{_g(b)}" for a, b in v["builds_um"])]
        for k, v in d.items()
    ]
    head = ["name", "film", "adhesive", "builds film/adhesive (um)"]
    return "\n\n".join(["COVERLAYS", table(head, rows), _sources([(k, v["source"]) for k, v in d.items()])])


def _foils(d: dict[str, Any]) -> str:
    rows = [
        [
            k, v["copper_type"], v["ipc4562_grade"], v["modulus_gpa"], v["poisson"], v["tensile_strength_mpa"],
            v["yield_strength_mpa"], v["fatigue_ductility_pct"], v["roughness_rq_um"], v["conductivity_pct_iacs"],
        ]
        for k, v in d.items()
    ]
    head = ["name", "type", "IPC-4562 grade", "E (GPa)", "nu", "UTS (MPa)", "yield (MPa)", "D_f (%)",
            "Rq (um)", "sigma (% IACS)"]
    return "\n\n".join(["COPPER FOILS", table(head, rows), _sources([(k, v["source"]) for k, v in d.items()])])


def _weights(d: dict[str, Any]) -> str:
    rows = [[k, v["weight_oz"], v["thickness_um"]] for k, v in d.items()]
    head = ["weight", "area weight (oz/ft^2)", "nominal thickness (um)"]
    return "\n\n".join(["FOIL WEIGHTS", table(head, rows), _sources([(k, v["source"]) for k, v in d.items()])])


def _fabrication(d: dict[str, Any]) -> str:
    mf, wt = d["min_feature"]["by_weight"], d["width_tolerance"]["by_weight_pct"]
    by_weight = table(
        ["weight", "min trace (um)", "min space (um)", "width tol. (+/-%)"],
        [[w, mf[w]["trace_um"], mf[w]["space_um"], wt[w]] for w in mf],
    )
    imp = table(
        ["impedance class", "tolerance (+/-%)"],
        [[c, v] for c, v in d["impedance_tolerance"]["classes_pct"].items()],
    )
    tt = d["thickness_tolerance"]
    mat = table(
        ["material (as supplied)", "thickness tol. (+/-%)"],
        [[k, v] for k, v in tt["material_pct"].items()],
    )
    total = tt["total"]
    lines = ["total thickness tolerance:"]
    for b in total["bands"]:
        lines.append(f"  up to {_g(b['up_to_um'])} um: +/-{_g(b['plus_minus_um'])} um")
    last = total["bands"][-1]
    lines.append(
        f"  above {_g(last['up_to_um'])} um: +/-{_g(total['above_pct'])} % "
        f"(at least +/-{_g(last['plus_minus_um'])} um)"
    )
    lines.append(f"stiffener thickness tolerance: +/-{_g(tt['stiffener_um'])} um")
    srcs = _sources(
        [
            ("min trace/space", d["min_feature"]["source"]),
            ("width tolerance", d["width_tolerance"]["source"]),
            ("impedance tolerance", d["impedance_tolerance"]["source"]),
            ("thickness tolerance", tt["source"]),
            ("total thickness", total["source"]),
        ]
    )
    return "\n\n".join(["FABRICATION CAPABILITY", by_weight, imp, mat, "\n".join(lines), srcs])


_RENDER = {
    "dielectrics": _dielectrics,
    "coverlays": _coverlays,
    "foils": _foils,
    "weights": _weights,
    "fabrication": _fabrication,
}


def render_text(catalog: Catalog, sections: Sequence[str] = SECTIONS) -> str:
    """The readable listing of ``sections`` of ``catalog``, ending with the one-line caution."""
    full = catalog.to_dict()
    parts = [_RENDER[s](full[s]) for s in sections]
    return "\n\n\n".join(parts) + "\n\nNote: " + CAUTION
