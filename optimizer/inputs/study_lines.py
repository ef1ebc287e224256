"""The controlled-impedance lines of a study: ``line:`` (one line) or ``lines:`` (several), checked
across fields.

Each line becomes a :class:`~.study_spec.LineSpec` with its name and copper layer. Which copper layer
carries which line is otherwise the search's choice (:mod:`strainline.optimizer.search.linelayers`);
here only what a single field or a pair of fields can decide is checked: the copper layers a line
type needs, a layer of the right kind (outer for microstrip and coplanar, inner for striplines),
unique names, ``share_with`` and ``loss_line`` naming lines of the study. Every problem is one line
naming the field.
"""
from __future__ import annotations

from typing import Any

from strainline.optimizer.errors import not_one_of
from strainline.optimizer.inputs import study_spec as S


def allowed_layers(kind: str, ncu: int) -> list[int]:
    """1-based copper layers that can carry a line of ``kind`` in a stack of ``ncu`` copper layers:
    an inner layer for a stripline (a plane above and below), an outer one otherwise (the plane is
    the adjacent copper)."""
    if kind in S.INNER_KINDS:
        return list(range(2, ncu))
    return [1, ncu] if ncu > 1 else [1]


def study_lines(m: Any, catalog: Any, err: Any, rng: Any, tolerance_of: Any) -> tuple[S.LineSpec, ...]:
    """The study's lines, each checked.

    Parameters
    ----------
    m : StudyModel
        The validated study model (``line`` or ``lines``, ``loss_line``, ``stack``).
    catalog : Catalog
        For the impedance tolerance classes.
    err : callable
        ``err(field_path, message) -> StudyError``.
    rng : callable
        ``rng(field_path, value, lo, hi, lo_open=False) -> StudyError`` (a range error).
    tolerance_of : callable
        ``tolerance_of(value, catalog) -> (relative, label)`` (a percent or a catalog class).
    """
    if (m.line is None) == (m.lines is None):
        raise err("line", "give either line: (one line) or lines: (a list of lines), not both" if m.line
                  is not None else "is required (line: for one line, or lines: for a list of lines)")
    st = m.stack
    ncu = st.copper_layers
    many = m.lines is not None
    models = list(m.lines) if many else [m.line]
    if not models:
        raise err("lines", "is empty; give at least one line")
    if len(models) > S.MAX_LINES:
        raise err("lines", f"has {len(models)} lines; at most {S.MAX_LINES} are allowed")
    if many and st.signal_layer is not None:
        raise err("stack.signal_layer", "does not apply with lines:; give each line its copper layer in "
                                        "lines[i].layer (a number or auto)")
    out: list[S.LineSpec] = []
    for i, ln in enumerate(models):
        at = f"lines[{i}]" if many else "line"
        kind = ln.type
        name = ln.name if many else "line"
        if name in [x.name for x in out]:
            raise err(f"{at}.name", f"{name!r} is used by an earlier line; line names must be unique")
        tol, tol_label = ln.tolerance if ln.tolerance is not None else tolerance_of(10, catalog)
        # The nominal design must sit well inside the tolerance, leaving the rest of the band for
        # dielectric thickness, Dk and etch scatter: by default half of it (common practice, no source).
        nominal = ln.nominal_error_pct if ln.nominal_error_pct is not None else 50.0 * tol
        if not 0.0 < nominal <= 100.0 * tol:
            raise rng(f"{at}.nominal_error_pct", ln.nominal_error_pct, 0.0, 100.0 * tol, lo_open=True)
        if kind in S.GAP_KINDS:
            if ln.gap_um is None:
                raise err(f"{at}.gap_um", f"is required for a {kind} line (a number or a list of gaps in um)")
            gaps = ln.gap_um
        else:
            if ln.gap_um is not None:
                raise err(f"{at}.gap_um", f"is only used by [{', '.join(S.GAP_KINDS)}], not by {kind!r}")
            gaps = ()
        need = S.MIN_COPPER[kind]
        if ncu < need:
            why = "a stripline sits between two ground planes" if kind in S.INNER_KINDS else \
                "an outer line needs the adjacent copper layer as its ground plane"
            raise err("stack.copper_layers", f"{ncu} is too few for a {kind} line{f' ({name})' if many else ''} "
                      f"({why}); allowed range [{need}, 8]")
        layer = ln.layer if many else st.signal_layer
        lpath = f"{at}.layer" if many else "stack.signal_layer"
        if layer is None:
            if st.order == "fixed":
                raise err(lpath, "'auto' needs stack.order 'free'; give a copper layer number for a fixed order")
        else:
            if layer > ncu:
                raise rng(lpath, layer, 1, ncu)
            allowed = allowed_layers(kind, ncu)
            if layer not in allowed:
                raise err(lpath, f"{layer} cannot carry a {kind} line; it must be "
                          f"{'an inner' if kind in S.INNER_KINDS else 'an outer'} copper layer, one of "
                          f"[{', '.join(map(str, allowed))}]")
        out.append(S.LineSpec(kind, ln.target_ohm, tol, tol_label, nominal / 100.0, ln.width_range_um[0],
                              ln.width_range_um[1], gaps, ln.frequency_ghz, ln.hatch_correction, name=name,
                              layer=layer, length_mm=ln.length_mm,
                              share_with=tuple(ln.share_with or ()) if many else (),
                              nominal_error_given=ln.nominal_error_pct is not None))
    names = [x.name for x in out]
    for i, x in enumerate(out):
        for j, other in enumerate(x.share_with):
            if other not in names or other == x.name:
                raise err(f"lines[{i}].share_with[{j}]",
                          not_one_of(None, other, [n for n in names if n != x.name]).message)
    if m.loss_line is not None and m.loss_line not in names:
        raise err("loss_line", not_one_of(None, m.loss_line, names).message)
    return tuple(out)


def may_share(a: S.LineSpec, b: S.LineSpec) -> bool:
    """True when the study lets lines ``a`` and ``b`` run on the same copper layer (either names
    the other in ``share_with``)."""
    return b.name in a.share_with or a.name in b.share_with
