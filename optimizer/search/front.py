"""The Pareto front: candidates with every figure needed to recompute them, outputs, hypervolume.

:func:`build_front` turns a search result into the ``front.json`` object (see README.md, strainline solve);
:func:`write_outputs` writes ``front.json`` and ``front.csv`` atomically (the report and handoff
writers hook in there); :func:`front_dataframe` is the flat pandas view; :func:`format_table` the
short text table ``strainline solve`` prints.
"""
from __future__ import annotations

import math
from typing import Any

import numpy as np

from strainline.models.stackup import Layer, Stackup
from strainline.models.units import UM
from strainline.optimizer.search.infeasible import explain_infeasible
from strainline.optimizer.search.problem import Problem
from strainline.optimizer.search.archive import _dominated_by, hypervolume
from strainline.optimizer.search.engine import SearchResult
from strainline.optimizer.search.constraints import allow_uncovered, elongation_fraction
from strainline.optimizer.search.leaves import label as leaf_label
from strainline.optimizer.search.columns import cover_cols
from strainline.optimizer.search.space import Space

CAUTION = (
    "Estimates for concept work only: verify with the fabricator's impedance modelling and coupons and "
    "with flex testing (IPC-TM-650 methods); defer to IPC-2223/IPC-6013 and licensed engineering practice."
)
#: Reference point of the hypervolume in normalized objective space (ideal = 0, nadir = 1 on every axis).
HV_REFERENCE = 1.1


def _num(x: Any) -> float | None:
    """A JSON-safe float (None for nan/inf)."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _finding(code: str, severity: str, message: str, source: str) -> dict[str, str]:
    return {"code": code, "severity": severity, "message": message, "source": source}


# ------------------------------------------------------------------------------------------------
# one candidate -> Stackup
def candidate_stackup(space: Space, x: np.ndarray, name: str = "") -> Stackup:
    """The :class:`Stackup` record of one candidate (zero-thickness positions dropped).

    Parameters
    ----------
    space : Space
    x : ndarray, (n_var,)
        The candidate's integer choices.
    name : str
    """
    d = space.decode(np.asarray(x, np.int64).reshape(1, -1))
    N, L = space.n_cu, space.n_layers
    sig = int(d.signal[0])
    names = {0: "top cover film", 1: "top cover adhesive", L - 2: "bottom cover adhesive", L - 1: "bottom cover film"}
    for i in range(N):
        names[space.cu_col(i)] = f"L{i + 1} {'signal' if i == sig else 'ground'}"
    for g in range(N - 1):
        a, f, b = space.gap_cols(g)
        names[a], names[f], names[b] = (f"gap {g + 1} adhesive (upper)", f"gap {g + 1} dielectric",
                                        f"gap {g + 1} adhesive (lower)")
        if space.unbonded:
            ca, cf, cf2, ca2 = cover_cols(g)
            names[ca], names[cf] = f"L{g + 1} leaf cover adhesive", f"L{g + 1} leaf cover film"
            names[cf2], names[ca2] = f"L{g + 2} leaf cover film", f"L{g + 2} leaf cover adhesive"
    layers: list[Layer] = []
    air_t = 0.0
    for c in range(L):
        t = float(d.thickness_m[0, c])
        if d.is_air[0, c]:
            air_t += t
            continue
        if air_t > 0 or (c > 0 and d.is_air[0, c - 1]):
            layers.append(Layer(f"air gap {sum(1 for x in layers if x.kind == 'air-gap') + 1}", "air-gap",
                                air_t, 0.0, 0.0, None, None, "air"))
            air_t = 0.0
        m = int(d.material[0, c])
        if m == -1:
            i = (c - 2) // (space.gap_width + 1)
            k = int(d.cu_opt[0, i])
            w, fkey, _ = space.cu_opts[k]
            foil = space.foils[k]
            fm = int(d.fill_material[0, c])
            fill = {} if d.coverage[0, c] >= 1 else (
                {"fill_modulus_pa": 0.0, "fill_poisson": 0.0, "fill_material": "air"} if fm < 0 else
                {"fill_modulus_pa": space.materials[fm].modulus_pa, "fill_poisson": space.materials[fm].poisson,
                 "fill_material": space.materials[fm].name})
            layers.append(Layer(names[c], "copper", t, foil.modulus_pa, foil.poisson, None, None, fkey,
                                coverage=float(d.coverage[0, c]), copper=foil, **fill))
        elif m >= 0 and t > 0:
            mat = space.materials[m]
            layers.append(Layer(names[c], "dielectric", t, mat.modulus_pa, mat.poisson, mat.dk, mat.df, mat.name,
                                family=mat.family))
    return Stackup(tuple(layers), name=name)


def copper_weight(space: Space, x: np.ndarray, i: int) -> str:
    """Foil weight key of copper layer ``i`` of one candidate."""
    s = space.slots(np.asarray(x, np.int64).reshape(1, -1))
    return space.cu_opts[int(s["cu"][0, i])][0]


# ------------------------------------------------------------------------------------------------
def build_front(problem: Problem, result: SearchResult, catalog: Any, seed: int,
                study_raw: dict[str, Any] | None = None) -> dict[str, Any]:
    """The ``front.json`` object of a finished search.

    Parameters
    ----------
    problem : Problem
    result : SearchResult
    catalog : Catalog
    seed : int
    study_raw : dict, optional
        The study as given (defaults to the study's own ``raw``).
    """
    from strainline.models.lines import LineGeometry
    from strainline.models.lines.evaluate import method_findings, methods_used, range_findings
    from strainline.optimizer import __version__
    from strainline.optimizer.search.zones import zone_findings, zone_objects

    sp = problem.space
    study = sp.study
    arch = result.archive
    X = arch.X
    order = np.lexsort(arch.F.T[::-1]) if len(X) else np.array([], np.int64)
    X, F = X[order], arch.F[order]
    ev = problem.evaluate(X, want_cycles=True) if len(X) else None
    keys = problem.objective_keys()
    tb = problem.table
    kind = study.line.type
    candidates = []
    for j in range(len(X)):
        x = X[j]
        cid = f"C{j + 1:03d}"
        st = candidate_stackup(sp, x, name=f"{study.name} {cid}")
        bends, reports, pick = zone_objects(study, st, ev, j, catalog, elongation_fraction(study), allow_uncovered)
        rep = reports[pick]     # the zone shown as ``bend`` (named by strain_bend, else the worst)
        slots = sp.slots(x.reshape(1, -1))
        sig = int(slots["signal"][0])
        row = int(ev.line_row[j])
        geom = LineGeometry(width_m=tb.width_m[row], height_m=tb.height_m[row], thickness_m=tb.thickness_m[row],
                            er=tb.er[row], gap_m=tb.gap_m[row], height_top_m=tb.height_top_m[row],
                            er_top=tb.er_top[row], cover_m=tb.cover_m[row], cover_er=tb.cover_er[row],
                            bottom_ground=True)
        # the search compares objectives on the resolution grid; the front reports exact values
        exact = {"peak_strain": ev.peak_strain[j] * 100.0, "signal_strain": ev.signal_strain[j] * 100.0,
                 "thickness": ev.total_thickness_m[j] / UM, "loss": tb.loss_db_per_m[row],
                 "life": ev.cycles[j]}
        want_yield = "yield" in problem.objectives or study.limits.min_yield_pct is not None
        yres = problem.row_yield() if want_yield else None
        if yres is not None:
            exact["yield"] = 100.0 * (1.0 - yres.yield_frac[row])
        objectives = {key: _num(exact[o]) for o, key in zip(problem.objectives, keys)}
        line = {
            "type": kind,
            "layer": sig + 1,
            "layer_name": f"L{sig + 1} signal",
            "copper_weight": sp.cu_opts[int(slots["cu"][0, sig])][0],
            "width_um": _num(tb.width_m[row] / UM),
            "gap_um": _num(tb.gap_m[row] / UM),
            "z0_ohm": _num(tb.z0_ohm[row]),
            "z_diff_ohm": _num(tb.z_diff_ohm[row]),
            "target_ohm": study.line.target_ohm,
            "impedance_error_pct": _num(100 * (tb.z_ohm[row] / study.line.target_ohm - 1)),
            "eps_eff": _num(tb.eps_eff[row]),
            "loss_db_per_m": _num(tb.loss_db_per_m[row]),
            "conductor_loss_db_per_m": _num(tb.conductor_db_per_m[row]),
            "dielectric_loss_db_per_m": _num(tb.dielectric_db_per_m[row]),
            "frequency_ghz": study.line.frequency_ghz,
            "geometry": {
                "height_um": _num(tb.height_m[row] / UM),
                "height_top_um": _num(tb.height_top_m[row] / UM),
                "thickness_um": _num(tb.thickness_m[row] / UM),
                "er": _num(tb.er[row]),
                "er_top": _num(tb.er_top[row]),
                "cover_um": _num(tb.cover_m[row] / UM),
                "cover_er": _num(tb.cover_er[row]),
                "bottom_ground": True if kind == "coplanar" else None,
                "er_rule": "series capacitance by thickness (composite_er)",
            },
            "method": "; ".join(methods_used(kind, geom)),
        }
        from strainline.optimizer.search.linetable import closed_form_finding, line_model_record
        line.update(line_model_record(tb, row))
        findings = zone_findings(reports, [z.name for z in study.bends], pick)
        if yres is not None:
            from strainline.optimizer.search.yieldcalc import yield_finding
            line["impedance_yield"] = {
                "yield_pct": _num(100.0 * yres.yield_frac[row]), "stderr_pct": _num(100.0 * yres.stderr[row]),
                "samples": int(yres.samples), "sigma_pct": _num(100.0 * yres.sigma_rel[row]),
                "variance_share": {n: _num(float(v)) for n, v in zip(yres.names, yres.shares[row])},
                "dominant": yres.names[int(yres.dominant[row])]}
            findings.append(_finding("impedance-yield", "info", yield_finding(yres, row),
                                     "quasi-Monte Carlo over the catalog's fabrication tolerances"))
        cf_note = closed_form_finding(tb, row)
        if cf_note:
            findings.append(_finding("line-method", "info", cf_note, "strainline's 2-D field solver on this candidate's layers"))
        for note in ([] if cf_note else method_findings(kind, geom)):
            findings.append(_finding("line-method", "info", note, "closed form against a converged 2-D field solution (strainline line --field-solve)"))
        for note in range_findings(kind, geom):
            findings.append(_finding("line-range", "warning", note, "stated validity range of the equation"))
        err = tb.z_ohm[row] / study.line.target_ohm - 1
        if abs(err) > 0.01:
            findings.append(_finding(
                "impedance-off-target", "warning",
                f"the width is held at the end of its allowed range ({tb.width_m[row] / UM:.1f} um), so the nominal "
                f"impedance is {100 * err:+.1f} % off target, leaving only {100 * (study.line.tolerance - abs(err)):.1f} % "
                f"of the {study.line.tolerance_label} tolerance for process variation",
                "study tolerance and the fabricator's minimum trace width"))
        planes = [p for p in (sig - 1, sig + 1) if 0 <= p < sp.n_cu]
        if kind not in ("stripline", "coupled-stripline"):
            planes = [sig + 1] if sig == 0 else [sig - 1]
        cov = slots["cov_val"][0]
        hatched = [p for p in planes if cov[p] < 1.0]
        if hatched and study.stack.ground_hatch:
            # hatched planes given as geometry: a 3-D field solution of this candidate over its hatch
            from strainline.optimizer.search.fieldcache import FieldCache
            from strainline.optimizer.search.hatchline import candidate_hatch
            hcache = FieldCache()
            try:
                hrec, hnotes = candidate_hatch(study, tb, row, hatched, sig, {p: float(cov[p]) for p in hatched},
                                               hcache)
            finally:
                hcache.close()
            if hrec is not None:
                line["hatch"] = hrec
            findings += hnotes
        elif hatched:
            findings.append(_finding(
                "hatched-reference", "warning",
                "reference plane " + ", ".join(f"L{p + 1} ({100 * cov[p]:.0f} % copper)" for p in hatched)
                + " is hatched: the impedance shown is the solid-plane value, a lower bound; hatched-plane "
                "impedance has no closed form; give the hatch geometry (stack.ground_hatch) so the search solves "
                "it in 3-D and pays for it, or check it with strainline line --hatch-pitch-um/--hatch-width-um "
                "and coupons",
                "lines reference notes section 7 (no published closed form)"))
        if study.bend.region == "unbonded":
            findings.append(_finding(
                "unbonded-model", "info",
                f"unbonded bend region built as leaves {sp.describe(x).get('leaves', leaf_label(sp.leaf_opts[0]))}"
                " (copper layers per bonded leaf): the bond ply between leaves is left out, every copper keeps "
                "its core and each leaf face bordering air carries the cover; each leaf bends about its own "
                "axis and needs its own length allowance",
                "transformed section per leaf (bending reference notes section 1.7)"))
        layers_out = []
        for lay in rep["layers"]:
            layers_out.append(dict(lay))
        bend = dict(bends[pick])
        candidates.append({
            "id": cid,
            "objectives": objectives,
            "line": line,
            "bend": bend,
            "bends": bends,
            "layers": layers_out,
            "choices": sp.describe(x),
            "findings": findings,
        })
    # hypervolume in normalized space
    search: dict[str, Any] = {
        "method": result.method,
        "evaluated": int(result.evaluated),
        "space_size": int(result.space_size),
        "feasible": int(arch.feasible),
        "front_size": len(candidates),
        "stopped": result.stopped,
        "seconds": round(result.seconds, 3),
        "objectives": keys,
        "constraints": list(problem.constraint_names),
        **{k: v for k, v in getattr(result, "info", {}).items()},   # rate, workers, generations ... (engine)
    }
    if len(F):
        ideal, nadir = F.min(axis=0), F.max(axis=0)
        hv = hypervolume(F, ideal, nadir, HV_REFERENCE)
        ref = nadir + (HV_REFERENCE - 1.0) * np.where(nadir > ideal, nadir - ideal, 1.0)
        search["hypervolume"] = _num(hv)
        search["reference_point"] = {
            k: (_num(10 ** (-r)) if o == "life" else _num(r)) for k, o, r in zip(keys, problem.objectives, ref)}
        search["normalization"] = {
            "ideal": {k: (_num(10 ** (-v)) if o == "life" else _num(v)) for k, o, v in zip(keys, problem.objectives, ideal)},
            "nadir": {k: (_num(10 ** (-v)) if o == "life" else _num(v)) for k, o, v in zip(keys, problem.objectives, nadir)},
            "reference": f"{HV_REFERENCE} on every normalized axis (ideal 0, nadir 1); life as -log10(cycles)",
        }
    else:
        search["hypervolume"] = 0.0
        search["reference_point"] = None
        search["infeasible"] = explain_infeasible(problem, arch)
    # a uniform sample of the feasible points the search saw, less the front: the report draws
    # them faintly behind the front (objectives on the search's resolution grid)
    dominated: list[dict[str, Any]] = []
    sample = getattr(arch, "sample_F", np.empty((0, len(keys))))
    if len(F) and len(sample):
        behind = sample[_dominated_by(sample, F) & ~_on_front(sample, F)]
        for r in behind:
            dominated.append({"objectives": {
                k: (_num(10 ** (-v)) if o == "life" else _num(v)) for k, o, v in zip(keys, problem.objectives, r)}})
    search["dominated_sample"] = len(dominated)
    return {
        "study": study_raw if study_raw is not None else dict(study.raw),
        "version": __version__,
        "seed": seed,
        "search": search,
        "candidates": candidates,
        "dominated": dominated,
        "caution": CAUTION,
    }


def _on_front(A: np.ndarray, F: np.ndarray) -> np.ndarray:
    """Rows of A equal to some row of F."""
    return (A[:, None, :] == F[None, :, :]).all(axis=2).any(axis=1)


__all__ = ["build_front", "candidate_stackup", "CAUTION"]
