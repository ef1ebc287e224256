"""The default impedance guard: yield when the catalog knows the tolerances, else the half window.

Two guards keep a candidate's impedance honest:

* the **nominal window** -- the as-designed impedance (after the width solve) within
  ``line.nominal_error_pct`` of the target; without the key, half the impedance tolerance (a rule
  of thumb, common practice, no source: it leaves the other half for the build's scatter);
* the **impedance yield** -- the share of builds inside the impedance tolerance under the
  catalog's fabrication tolerances (:mod:`.yieldcalc`), at least ``limits.min_yield_pct``.

When the catalog carries every tolerance the yield needs (:func:`tolerances_known`), the yield is the
better guard: it weighs the scatter the fabricator states instead of reserving half the band for it.
:func:`apply_default_guard` then makes it the default. A study that sets ``nominal_error_pct`` on a
line keeps that line's window (the option stays); a line without it gets the full tolerance band as
its window (a nominal point outside the band can never yield), so the yield decides; the study's
``limits.min_yield_pct`` is kept, and without one :data:`DEFAULT_MIN_YIELD_PCT` applies.

Pure: the study comes back as a new record (``dataclasses.replace``); nothing is read or written.
"""
from __future__ import annotations

import dataclasses
from typing import Any

#: Least impedance yield, percent, when the study gives none and yield is the default guard:
#: nine builds in ten inside the impedance tolerance (common practice, no source).
DEFAULT_MIN_YIELD_PCT = 90.0
#: Names of the study's coverlay options that are no catalog material.
_NONE = "none"


def _lines(study: Any) -> tuple[Any, ...]:
    return tuple(getattr(study, "lines", None) or (study.line,))


def _given(line: Any) -> bool:
    return bool(getattr(line, "nominal_error_given", False))


def study_dielectrics(study: Any, catalog: Any) -> tuple[str, ...]:
    """Catalog names of every dielectric the study's stacks may put around a line (films, adhesives,
    cover films and cover adhesives)."""
    st = study.stack
    names: list[str] = [*st.dielectric, *(a for a in st.adhesive if a != _NONE)]
    for c in st.coverlay:
        if c == _NONE:
            continue
        if c in catalog.coverlays:
            cov = catalog.coverlays[c]
            names += [cov.film, cov.adhesive]
        else:
            names.append(c)
    return tuple(dict.fromkeys(names))


def missing_dk_tolerance(study: Any, catalog: Any) -> tuple[str, ...]:
    """The study's dielectrics for which the catalog gives no Dk tolerance."""
    of = getattr(catalog, "dk_tolerance_of", None)
    return tuple(n for n in study_dielectrics(study, catalog) if of is None or of(n) is None)


def tolerances_known(study: Any, catalog: Any) -> bool:
    """True when the catalog carries every tolerance the yield of this study needs: the etched-width
    tolerance of every copper weight, the thickness tolerances of the dielectric families and the
    copper foil, and a Dk tolerance for every dielectric the study may use."""
    fab = getattr(catalog, "fabrication", None)
    if fab is None:
        return False
    width = getattr(fab, "width_tolerance", {}) or {}
    mat = getattr(fab, "material_thickness_tolerance", {}) or {}
    weights = tuple(getattr(study.stack, "copper_weights", ()))
    return (all(w in width for w in weights) and "copper-foil" in mat and len(mat) > 1
            and not missing_dk_tolerance(study, catalog))


def apply_default_guard(study: Any, catalog: Any) -> Any:
    """The study with the impedance yield as its default guard, when the catalog allows it.

    Parameters
    ----------
    study : Study
        A validated study (``line``/``lines`` with ``nominal_error_given``, ``limits``).
    catalog : Catalog
        The catalog the study is solved with.

    Returns
    -------
    Study
        ``study`` itself when the tolerances are not all known (:func:`tolerances_known`) or every
        line gave ``nominal_error_pct``; else a copy in which every line without
        ``nominal_error_pct`` has ``nominal_error = tolerance`` (the full band) and
        ``limits.min_yield_pct`` is the study's, else :data:`DEFAULT_MIN_YIELD_PCT`.
    """
    lines = _lines(study)
    if not tolerances_known(study, catalog) or all(_given(ln) for ln in lines):
        return study
    new_lines = tuple(ln if _given(ln) else dataclasses.replace(ln, nominal_error=float(ln.tolerance))
                      for ln in lines)
    limits = study.limits
    if limits.min_yield_pct is None:
        limits = dataclasses.replace(limits, min_yield_pct=DEFAULT_MIN_YIELD_PCT)
    changes: dict[str, Any] = {"line": new_lines[0], "limits": limits}
    if any(f.name == "lines" for f in dataclasses.fields(study)):
        changes["lines"] = new_lines
    return dataclasses.replace(study, **changes)


def _yield_given(study: Any) -> bool:
    raw = getattr(study, "raw", None) or {}
    lim = raw.get("limits") if hasattr(raw, "get") else None
    return hasattr(lim, "get") and lim.get("min_yield_pct") is not None


def guard_note(study: Any, catalog: Any = None) -> str:
    """One sentence naming the impedance guard in force, for front.json and reports.

    Read from the study itself (after :func:`apply_default_guard`): the yield limit and whether the
    study file gave it (``study.raw``), and each line's nominal window and whether the file gave it.
    With ``catalog``, a half-window default names the dielectrics whose Dk tolerance is missing.
    """
    parts: list[str] = []
    y = study.limits.min_yield_pct
    if y is not None:
        src = "the study's limits.min_yield_pct" if _yield_given(study) else (
            "the default when the catalog carries the fabrication tolerances; common practice, no source")
        parts.append(f"impedance yield at least {y:g} % under the catalog's fabrication tolerances ({src})")
    for ln in _lines(study):
        name = getattr(ln, "name", "line")
        win, tol = 100 * ln.nominal_error, 100 * ln.tolerance
        if _given(ln):
            how = "line.nominal_error_pct"
        elif y is not None and abs(ln.nominal_error - ln.tolerance) <= 1e-12:
            how = "the full tolerance band: the yield decides"
        else:
            how = "half the tolerance, the rule-of-thumb default; common practice, no source"
        parts.append(f"{name}: nominal impedance within +/-{win:g} % of the target ({how}; tolerance +/-{tol:g} %)")
    if catalog is not None and y is None:
        missing = missing_dk_tolerance(study, catalog)
        if missing:
            parts.append("no yield guard: the catalog gives no Dk tolerance for " + ", ".join(missing))
    return "; ".join(parts) + "."
