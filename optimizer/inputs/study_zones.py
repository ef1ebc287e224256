"""The bend zones of a study: ``bend:`` (one zone) or ``bends:`` (several), checked across fields.

Each zone becomes a :class:`~.study_spec.BendSpec` with its name. The zones share the build of the
bend region (``region``, ``leaves``, ``plane_strain``): the search chooses one stack, and an
unbonded leaf grouping is part of the stack. Every problem is one line naming the field.
"""
from __future__ import annotations

from typing import Any

from strainline.optimizer.errors import not_one_of
from strainline.optimizer.inputs import study_spec as S
from strainline.optimizer.inputs.modelkit import show

#: Most bend zones one study may hold (each adds a strain evaluation per candidate).
MAX_ZONES = 16


def bend_zones(m: Any, ncu: int, err: Any) -> tuple[S.BendSpec, ...]:
    """The bend zones: ``bend:`` (one zone) or ``bends:`` (several), each checked; zones share the
    build of the bend region (region, leaves, plane_strain), their names are unique and
    ``strain_bend`` names one of them.

    Parameters
    ----------
    m : StudyModel
        The validated study model (``bend`` or ``bends``, ``strain_bend``).
    ncu : int
        Copper layers of the stack (for ``leaves``).
    err : callable
        ``err(field_path, message) -> StudyError`` (the study file's one-line error).
    """
    if (m.bend is None) == (m.bends is None):
        raise err("bend", "give either bend: (one bend zone) or bends: (a list of zones), not both" if m.bend
                  is not None else "is required (bend: for one zone, or bends: for a list of zones)")
    many = m.bends is not None
    models = list(m.bends) if many else [m.bend]
    if not models:
        raise err("bends", "is empty; give at least one bend zone")
    if len(models) > MAX_ZONES:
        raise err("bends", f"has {len(models)} zones; at most {MAX_ZONES} are allowed (each zone is a "
                           "full set of strain evaluations per candidate)")
    out: list[S.BendSpec] = []
    for i, bd in enumerate(models):
        at = f"bends[{i}]" if many else "bend"
        name = bd.name or ("bend" if not many else f"bend-{i + 1}")
        if name in [z.name for z in out]:
            raise err(f"{at}.name", f"{name!r} is used by an earlier zone; zone names must be unique")
        if bd.cycles is None and bd.use == "dynamic":
            raise err(f"{at}.cycles", "is required for dynamic use (the number of flex cycles the product needs)")
        if bd.cycles is not None and bd.use != "dynamic":
            raise err(f"{at}.cycles", f"only applies to use: dynamic ({at}.use is {bd.use}); remove it or "
                                      f"set {at}.use: dynamic")
        if bd.allow_uncovered and bd.use != "dynamic":
            raise err(f"{at}.allow_uncovered", f"only applies to use: dynamic ({at}.use is {bd.use}, "
                                               "where no cover is required); remove it")
        leaves = bd.leaves
        if leaves is not None:
            if bd.region != "unbonded":
                raise err(f"{at}.leaves", f"only applies to an unbonded bend; set {at}.region: unbonded "
                                          f"(it is {bd.region!r})")
            if leaves != "auto":
                _check_leaves(leaves, ncu, lambda p, msg, at=at: err(p.replace("bend.", f"{at}.", 1), msg))
        if out:
            first = models[0]
            for key in ("region", "leaves", "plane_strain"):
                if getattr(bd, key) != getattr(first, key):
                    raise err(f"{at}.{key}", f"{show(getattr(bd, key))} differs from bends[0].{key} "
                              f"{show(getattr(first, key))}; the zones of one study share the build of the bend "
                              "region (region, leaves, plane_strain)")
        out.append(S.BendSpec(bd.inner_radius_mm, bd.inside, bd.use, bd.cycles, bd.motion, bd.region,
                              bd.plane_strain, leaves, bd.allow_uncovered, name))
    if m.strain_bend is not None and m.strain_bend not in [z.name for z in out]:
        raise err("strain_bend", not_one_of(None, m.strain_bend, [z.name for z in out]).message)
    return tuple(out)


def _check_leaves(leaves: tuple[tuple[int, ...], ...], ncu: int, err: Any) -> None:
    """Every copper layer exactly once, each leaf contiguous, leaves in order top to bottom."""
    flat = [n for g in leaves for n in g]
    want = list(range(1, ncu + 1))
    if flat != want:
        for i, g in enumerate(leaves):
            for j, n in enumerate(g):
                if n > ncu:
                    raise err(f"bend.leaves[{i}][{j}]", f"{n} is out of range; allowed range [1, {ncu}] "
                                                        "(stack.copper_layers)")
        raise err("bend.leaves", f"{show([list(g) for g in leaves])} must name every copper layer 1..{ncu} exactly "
                                 "once, each leaf a run of adjacent layers, leaves in order top to bottom, "
                                 f"e.g. {[want[: ncu // 2], want[ncu // 2:]] if ncu > 1 else [want]}")
