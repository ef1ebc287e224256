"""Design-rule findings for a flex bend: pure functions returning frozen records.

Each :class:`Finding` carries its source. Three kinds of source appear:

* published or standard guidance, cited by author/title/year (where the figure itself is recalled
  and not checked against the printed text, the source says "from memory");
* the bend model itself (composite beam, Engelmaier), for results outside a model's validity range;
* trade rules of thumb, marked exactly "common practice, no source".

Nothing here prints or reads files.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from strainline.models.bending import bend_strains, ipc2223_double_sided_radius, ipc2223_single_sided_radius
from strainline.models.fatigue import EXTRAPOLATION_CYCLES
from strainline.models.stackup import Stackup

Severity = Literal["info", "warning", "error"]
SEVERITIES: tuple[str, ...] = get_args(Severity)
Use = Literal["install", "dynamic"]
USES: tuple[str, ...] = get_args(Use)

COMMON_PRACTICE = "common practice, no source"
SOURCE_IPC_RATIO = ("IPC-2223 (rev. D/E) bend-ratio guidance by number of copper layers; ratios from memory, "
                    "not checked against the printed standard")
SOURCE_BEAM = ("Euler-Bernoulli composite-beam kinematics (J. M. Gere and S. P. Timoshenko, Mechanics of "
               "Materials, composite beams)")
SOURCE_EPP = ("elastic-perfectly-plastic copper in the composite-beam force balance (idealisation as in "
              "N. E. Dowling, Mechanical Behavior of Materials)")
SOURCE_ENGELMAIER = ("W. Engelmaier, ASTM STP 736 (1981), with IPC-TM-650 2.4.2.1: calibrated on low-cycle "
                     "foil flex tests")
SOURCE_TR484 = ("IPC-TR-484 (1986), copper foil ductility round robin (W. Engelmaier): annealed wrought "
                "foil for severe or high-cycle flexing")
SOURCE_BUTTON = ("K. Smith, 'Decreasing Bend Radius and Improving Reliability, Part I', trade-magazine "
                 "column (2019): button plating keeps panel plating off the bend")

SOURCE_IPC_FORMULA = ("IPC-2223 single-/double-sided bend-radius formula; printed form and the allowable copper "
                      "deformation E_B (16 % RA / 11 % ED install, 0.3 % dynamic) from memory, not checked against "
                      "the printed standard")
#: IPC-2223 allowable copper deformation E_B as a fraction, as recalled (from memory).
IPC2223_EB: dict[tuple[str, str], float] = {("install", "rolled-annealed"): 0.16,
                                            ("install", "electrodeposited"): 0.11,
                                            ("dynamic", "rolled-annealed"): 0.003,
                                            ("dynamic", "electrodeposited"): 0.003}

SOURCE_PIC = ("K. Smith, 'Decreasing Bend Radius and Improving Reliability, Part II', trade-magazine column "
              "(2019): flexible solder mask minimum bend radius 0.4 in, not for dynamic flexing")
#: Share of a dielectric's elongation at break allowed in a bend (a stated margin; common practice,
#: no source); a study sets it with ``limits.elongation_fraction``.
ELONGATION_FRACTION: float = 0.5
#: Copper strain for a one-time install bend (common practice, no source).
INSTALL_STRAIN_LIMIT: float = 0.02
#: Inner radius over thickness for a one-time bend (common practice, no source).
ONE_TIME_RATIO: float = 10.0
#: Inner radius over thickness for dynamic flexing (common practice, no source).
DYNAMIC_RATIO: float = 25.0
#: IPC-2223 bend ratios as recalled (from memory): install 6 / 12 / 24 (1, 2, >= 3 copper layers),
#: dynamic 100 / 150 (1, 2 copper layers); dynamic multilayer not recommended (None).
IPC2223_INSTALL_RATIO: dict[int, float] = {1: 6.0, 2: 12.0, 3: 24.0}
IPC2223_DYNAMIC_RATIO: dict[int, float | None] = {1: 100.0, 2: 150.0, 3: None}


@dataclass(frozen=True)
class Finding:
    """One design-rule finding.

    Parameters
    ----------
    code : str
        Stable machine-readable code (e.g. ``"copper-strain-install"``).
    severity : {"info", "warning", "error"}
    message : str
        One sentence for a person.
    source : str
        Where the rule comes from ("common practice, no source" for rules of thumb).
    """

    code: str
    severity: Severity
    message: str
    source: str

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise ValueError(f"severity {self.severity!r} is not one of {list(SEVERITIES)}")
        if not self.source.strip():
            raise ValueError("a finding needs a source")

    def to_dict(self) -> dict[str, str]:
        return {"code": self.code, "severity": self.severity, "message": self.message, "source": self.source}


def ipc2223_bend_ratio(copper_layers: int, use: str) -> float | None:
    """IPC-2223 minimum inner-radius-to-thickness ratio as recalled (from memory).

    Parameters
    ----------
    copper_layers : int
        Copper layers in the bonded section (>= 1; 3 or more counts as multilayer).
    use : {"install", "dynamic"}

    Returns
    -------
    float or None
        The ratio; None for a dynamic multilayer, which the guidance does not recommend.
    """
    if use not in USES:
        raise ValueError(f"use {use!r} is not one of {list(USES)}")
    k = min(max(int(copper_layers), 1), 3)
    return IPC2223_INSTALL_RATIO[k] if use == "install" else IPC2223_DYNAMIC_RATIO[k]


@dataclass(frozen=True)
class _Leaf:
    names: tuple[str, ...]
    thickness_m: float
    inner_radius_m: float
    copper_layers: int


def _leaves(stackup: Stackup, inner_radius_m: float, inside_bottom: bool) -> list[_Leaf]:
    """Bonded leaves with their own thickness, nested inner radius and copper count."""
    layers = stackup.layers
    ids = stackup.leaf_ids()
    total = stackup.total_thickness_m
    y_top = np.cumsum([x.thickness_m for x in layers][::-1])[::-1]
    out = []
    for k in sorted(set(ids)):
        members = [i for i, j in enumerate(ids) if j == k]
        if layers[members[0]].kind == "air-gap":
            continue
        top = float(y_top[members[0]])
        bottom = top - sum(layers[i].thickness_m for i in members)
        r = inner_radius_m + (bottom if inside_bottom else total - top)
        out.append(_Leaf(tuple(layers[i].name for i in members), top - bottom, r,
                         sum(layers[i].kind == "copper" for i in members)))
    return out


def elastic_copper_strains(stackup: Stackup, inner_radius_m: float, inside_bottom: bool = True,
                           plane_strain: bool = False) -> np.ndarray:
    """Worst-face elastic strain of every copper layer (signed fraction), in copper-layer order.

    Parameters
    ----------
    stackup : Stackup
    inner_radius_m : float
        Inner bend radius, m.
    inside_bottom : bool
        True when the bottom face is inside the bend.
    plane_strain : bool
        Use plane-strain moduli.

    Returns
    -------
    ndarray
        One signed strain per copper layer (top to bottom), the face of larger magnitude.
    """
    a = stackup.arrays(plane_strain)
    s = bend_strains(a.thickness_m, a.modulus_pa, inner_radius_m, inside_bottom,
                     None if a.bonded else a.leaf)
    cu = np.asarray(stackup.copper_layers, dtype=int)
    top, bot = s.strain_top[0, cu], s.strain_bottom[0, cu]
    return np.where(np.abs(top) >= np.abs(bot), top, bot)


def bend_findings(stackup: Stackup, inner_radius_m: float, use: str = "install", inside_bottom: bool = True,
                  plane_strain: bool = False) -> tuple[Finding, ...]:
    """Design-rule findings for one stackup bent at one inner radius.

    Parameters
    ----------
    stackup : Stackup
    inner_radius_m : float
        Inner bend radius, m (> 0).
    use : {"install", "dynamic"}
        One-time install bend or repeated (dynamic) flexing.
    inside_bottom : bool
        True when the bottom face is the inside of the bend.
    plane_strain : bool
        Use plane-strain moduli for the strain evaluation.

    Returns
    -------
    tuple of Finding
        Ratio checks per bonded leaf (IPC-2223 recalled ratios; common-practice 10x / 25x), copper
        strain against ~2 % for an install bend, elastic results above yield (info; the plastic
        comparison is the caller's), tight-bend validity, electrodeposited copper in a dynamic bend
        and the declared bend-area features. Every material's own limit (dielectric strain, cover
        radius, bare copper, glass) is :func:`material_findings`.
    """
    if use not in USES:
        raise ValueError(f"use {use!r} is not one of {list(USES)}")
    out: list[Finding] = []
    leaves = _leaves(stackup, inner_radius_m, inside_bottom)
    several = len(leaves) > 1

    for leaf in leaves:
        if leaf.copper_layers == 0:
            continue  # a copper-free leaf carries no conductor to protect
        where = f"leaf [{leaf.names[0]} .. {leaf.names[-1]}]" if several else "the stack"
        ratio = leaf.inner_radius_m / leaf.thickness_m
        ipc = ipc2223_bend_ratio(leaf.copper_layers, use)
        if use == "dynamic" and ipc is None:
            out.append(Finding(
                "ipc2223-dynamic-multilayer", "warning",
                f"{where} bonds {leaf.copper_layers} copper layers in a dynamic bend; the guidance does not "
                "recommend bonded multilayers for dynamic flexing (consider an unbonded bend region)",
                SOURCE_IPC_RATIO))
        elif ipc is not None and ratio < ipc:
            out.append(Finding(
                "ipc2223-bend-ratio", "warning",
                f"{where}: inner radius / thickness = {ratio:.1f}, below {ipc:g}:1 for {use} use with "
                f"{leaf.copper_layers} copper layer(s)",
                SOURCE_IPC_RATIO))
        rule = ONE_TIME_RATIO if use == "install" else DYNAMIC_RATIO
        if ratio < rule:
            out.append(Finding(
                "bend-ratio-one-time" if use == "install" else "bend-ratio-dynamic", "warning",
                f"{where}: inner radius / thickness = {ratio:.1f}, below about {rule:g}x for "
                f"{'a one-time' if use == 'install' else 'a dynamic'} bend",
                COMMON_PRACTICE))
        if ratio < 1.0:
            out.append(Finding(
                "tight-bend-beam-model", "info",
                f"{where}: inner radius below the thickness; the plane-section beam model is approximate here",
                SOURCE_BEAM))

    out.extend(ipc2223_formula_findings(stackup, inner_radius_m, use, inside_bottom))

    cu = stackup.copper_layers
    if cu:
        strains = elastic_copper_strains(stackup, inner_radius_m, inside_bottom, plane_strain)
        k = int(np.argmax(np.abs(strains)))
        peak, name = float(strains[k]), stackup.layers[cu[k]].name
        if use == "install" and abs(peak) > INSTALL_STRAIN_LIMIT:
            out.append(Finding(
                "copper-strain-install", "warning",
                f"peak copper strain {100 * peak:+.2f} % in {name} exceeds about "
                f"{100 * INSTALL_STRAIN_LIMIT:g} % for a one-time install bend",
                COMMON_PRACTICE))
        yielded = [stackup.layers[i].name for i, s in zip(cu, strains)
                   if abs(s) > stackup.layers[i].copper.yield_strength_pa / stackup.layers[i].modulus_pa]
        if yielded:
            out.append(Finding(
                "elastic-above-yield", "info",
                f"copper strain above the yield strain sigma_y/E in {', '.join(yielded)}: the elastic-perfectly-"
                "plastic result is computed beside the elastic one (a warning follows when it moves the peak "
                "strain or the axis by more than the stated share)",
                SOURCE_EPP))

    if use == "dynamic":
        ed = [x.name for x in stackup.layers
              if x.kind == "copper" and x.copper is not None and x.copper.copper_type == "electrodeposited"]
        if ed:
            out.append(Finding(
                "ed-copper-dynamic", "warning",
                f"electrodeposited copper in a dynamic bend: {', '.join(ed)}; rolled-annealed foil is preferred",
                SOURCE_TR484))

    feats = stackup.features
    if "plated-through-holes" in feats:
        out.append(Finding("plated-through-holes-in-bend", "warning",
                           "plated-through holes declared in the bend area; keep plated holes out of the bend",
                           COMMON_PRACTICE))
    if "nickel-plating" in feats:
        out.append(Finding("nickel-plating-in-bend", "warning",
                           "nickel or other hard plating declared in the bend area; it cracks when flexed",
                           COMMON_PRACTICE))
    if "panel-plating" in feats:
        out.append(Finding("panel-plating-in-bend", "warning",
                           "panel plating declared in the bend area: it thickens every conductor with plated "
                           "copper; button plating is preferred",
                           SOURCE_BUTTON))
    if "button-plating" in feats:
        out.append(Finding("button-plating", "info",
                           "button plating declared: plated copper only at the holes, none on the bend conductors",
                           SOURCE_BUTTON))
    return tuple(out)


def layer_strains(stackup: Stackup, inner_radius_m: float, inside_bottom: bool = True,
                  plane_strain: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """Elastic strain at the top and bottom face of every layer (fraction), each leaf about its own axis."""
    a = stackup.arrays(plane_strain)
    s = bend_strains(a.thickness_m, a.modulus_pa, inner_radius_m, inside_bottom, None if a.bonded else a.leaf)
    return s.strain_top[0], s.strain_bottom[0]


def bare_copper(stackup: Stackup) -> tuple[str, ...]:
    """Copper layers with nothing but air or the outside on one face (zero-thickness layers skipped)."""
    lay = stackup.layers
    out = []
    for i, x in enumerate(lay):
        if x.kind != "copper":
            continue
        for step in (-1, 1):
            j = i + step
            while 0 <= j < len(lay) and lay[j].thickness_m == 0 and lay[j].kind != "air-gap":
                j += step
            if not (0 <= j < len(lay)) or lay[j].kind == "air-gap":
                out.append(x.name)
                break
    return tuple(out)


def material_findings(stackup: Stackup, inner_radius_m: float, use: str = "install", inside_bottom: bool = True,
                      plane_strain: bool = False, elongation_fraction: float = ELONGATION_FRACTION,
                      allow_uncovered: bool = False) -> tuple[Finding, ...]:
    """Every material's limit in the bend: one finding per breach (or per allowed exception).

    * ``dielectric-strain``: the strain at a face of a dielectric, adhesive or cover beyond its tensile
      elongation at break times ``elongation_fraction`` (a stated margin; common practice, no source);
    * ``cover-min-radius``: the inner radius below a cover's catalog minimum bend radius (photoimageable
      cover 0.4 in: :data:`SOURCE_PIC`);
    * ``copper-uncovered-dynamic``: a copper layer bare at a leaf face in a dynamic bend (unless waived);
    * ``glass-dynamic`` (error) / ``glass-install-tight`` / ``glass-install``: woven glass in a dynamic
      bend; in an install bend below / above the one-time ratio (:data:`ONE_TIME_RATIO`).

    Parameters
    ----------
    stackup : Stackup
        Layers carry ``elongation`` and ``min_bend_radius_m`` where the catalog gives them.
    inner_radius_m : float
    use : {"install", "dynamic"}
    inside_bottom, plane_strain : bool
    elongation_fraction : float
        Share of the elongation at break allowed, in (0, 1].
    allow_uncovered : bool
        Waive the cover rule of a dynamic bend.
    """
    if use not in USES:
        raise ValueError(f"use {use!r} is not one of {list(USES)}")
    top, bot = layer_strains(stackup, inner_radius_m, inside_bottom, plane_strain)
    out: list[Finding] = []
    for i, x in enumerate(stackup.layers):
        if x.kind != "dielectric" or x.thickness_m == 0:
            continue
        worst = max(abs(top[i]), abs(bot[i]))
        lim = np.inf if x.elongation is None else x.elongation * elongation_fraction
        if worst > lim:
            out.append(Finding(
                "dielectric-strain", "warning",
                f"{x.name} ({x.material}) is strained to {100 * worst:.2f} %, beyond {100 * lim:.2f} % "
                f"({elongation_fraction:g} x its {100 * x.elongation:g} % elongation at break)",
                f"catalog elongation at break; derating {elongation_fraction:g} ({COMMON_PRACTICE})"))
        if x.min_bend_radius_m is not None and inner_radius_m < x.min_bend_radius_m:
            out.append(Finding(
                "cover-min-radius", "warning",
                f"{x.name} ({x.material}) needs a bend radius of at least {x.min_bend_radius_m * 1e3:.2f} mm; the "
                f"inner radius is {inner_radius_m * 1e3:.3g} mm",
                SOURCE_PIC))
    bare = bare_copper(stackup)
    if use == "dynamic" and bare and not allow_uncovered:
        out.append(Finding(
            "copper-uncovered-dynamic", "warning",
            f"copper bare at a leaf face in a dynamic bend: {', '.join(bare)}; a dynamic flex needs a cover on "
            "both faces of every leaf (bend.allow_uncovered waives it)",
            COMMON_PRACTICE))
    glass = [x.name for x in stackup.layers if x.glass_reinforced and x.thickness_m > 0]
    if glass and use == "dynamic":
        out.append(Finding("glass-dynamic", "error",
                           f"woven-glass laminate in a dynamic bend: {', '.join(glass)}; keep glass out of "
                           "flexing regions", COMMON_PRACTICE))
    elif glass:
        for leaf in _leaves(stackup, inner_radius_m, inside_bottom):
            mine = [n for n in glass if n in leaf.names]
            if not mine:
                continue
            ratio = leaf.inner_radius_m / leaf.thickness_m
            tight = ratio < ONE_TIME_RATIO
            out.append(Finding(
                "glass-install-tight" if tight else "glass-install", "warning" if tight else "info",
                f"woven-glass laminate in an install bend ({', '.join(mine)}): inner radius / thickness = "
                f"{ratio:.1f}, {'below' if tight else 'above'} about {ONE_TIME_RATIO:g}x for a one-time bend"
                + ("" if tight else "; allowed, bend it once and gently"),
                COMMON_PRACTICE))
    return tuple(out)


def ipc2223_formula_radius(stackup: Stackup, use: str,
                           inside_bottom: bool = True) -> tuple[float, float, float] | None:
    """IPC-2223 formula radius for a bonded single- or double-sided stack, and the formula's NA error.

    Single-sided: c = copper thickness, D = dielectric between the copper and the inner face.
    Double-sided: c = the thicker copper, d = dielectric between the copper layers, D = dielectric
    between the inner copper and the inner face. E_B by use and copper type (:data:`IPC2223_EB`,
    from memory; the smaller when the foils differ).

    Returns
    -------
    (radius_m, axis_offset_m, lever_arm_m) or None
        None for other constructions (unbonded, no copper, more than two copper layers). The
        offset is the distance between the composite-beam neutral axis and the position the formula
        assumes (copper mid-plane, or the mid-plane between the copper layers), m; the lever arm is
        the formula's distance from that axis to the outer copper face (c/2, or d/2 + c), m.
    """
    if use not in USES:
        raise ValueError(f"use {use!r} is not one of {list(USES)}")
    cu = stackup.copper_layers
    if not stackup.bonded or len(cu) not in (1, 2):
        return None
    layers = stackup.layers
    eb = min(IPC2223_EB[(use, layers[i].copper.copper_type)] for i in cu)
    t = [x.thickness_m for x in layers]
    y_top = np.cumsum(t[::-1])[::-1]
    y_bot = y_top - np.asarray(t)
    total = float(y_top[0])
    a = stackup.arrays()
    y_na = float(bend_strains(a.thickness_m, a.modulus_pa, 1.0, inside_bottom).y_na_m[0, 0])
    if len(cu) == 1:
        i = cu[0]
        c = t[i]
        cover = float(y_bot[i]) if inside_bottom else total - float(y_top[i])
        assumed = 0.5 * (y_bot[i] + y_top[i])
        arm = 0.5 * c
        r = float(ipc2223_single_sided_radius(c, cover, eb))
    else:
        i, j = cu
        c = max(t[i], t[j])
        d = float(y_bot[i] - y_top[j])
        inner = j if inside_bottom else i
        cover = float(y_bot[inner]) if inside_bottom else total - float(y_top[inner])
        assumed = 0.5 * (y_bot[i] + y_top[j])
        arm = 0.5 * d + c
        r = float(ipc2223_double_sided_radius(c, d, cover, eb))
    return r, abs(y_na - float(assumed)), arm


def ipc2223_formula_findings(stackup: Stackup, inner_radius_m: float, use: str,
                             inside_bottom: bool = True) -> tuple[Finding, ...]:
    """Compare the radius with the IPC-2223 single-/double-sided formula (where it applies)."""
    got = ipc2223_formula_radius(stackup, use, inside_bottom)
    if got is None:
        return ()
    r_ipc, offset, arm = got
    out: list[Finding] = []
    n = len(stackup.copper_layers)
    if inner_radius_m < r_ipc:
        out.append(Finding(
            "ipc2223-formula-radius", "warning",
            f"inner radius {inner_radius_m * 1e3:.3f} mm is below the IPC-2223 {'single' if n == 1 else 'double'}-sided "
            f"formula radius {r_ipc * 1e3:.3f} mm for {use} use",
            SOURCE_IPC_FORMULA))
    if offset > 0.1 * arm:
        out.append(Finding(
            "ipc2223-formula-unbalanced", "info",
            f"the neutral axis sits {offset * 1e6:.1f} um from where the IPC-2223 formula assumes it (unbalanced "
            f"build; {100 * offset / arm:.0f} % of its {arm * 1e6:.1f} um lever arm): the formula does not apply, "
            "use the composite-beam strain",
            SOURCE_IPC_FORMULA))
    return tuple(out)


def fatigue_findings(names, cycles, extrapolated, plastic, motion: str) -> tuple[Finding, ...]:
    """Findings on the Engelmaier lives of the copper layers.

    Parameters
    ----------
    names : sequence of str
        Copper layer names.
    cycles, extrapolated, plastic : array_like, same length as ``names``
        From :func:`strainline.models.fatigue.fatigue_life`.
    motion : str
        The stated motion (for the message).
    """
    out: list[Finding] = []
    ext = [n for n, e in zip(names, np.asarray(extrapolated, dtype=bool)) if e]
    if ext:
        out.append(Finding(
            "fatigue-extrapolated", "info",
            f"predicted life beyond {EXTRAPOLATION_CYCLES:.0e} cycles ({motion}) in {', '.join(ext)}: an "
            "extrapolation of a low-cycle equation, order of magnitude only",
            SOURCE_ENGELMAIER))
    pl = [n for n, p in zip(names, np.asarray(plastic, dtype=bool)) if p]
    if pl:
        out.append(Finding(
            "fatigue-plastic", "info",
            f"copper cycles above its yield strain in {', '.join(pl)} (plastic, low-cycle regime)",
            SOURCE_ENGELMAIER))
    return tuple(out)
