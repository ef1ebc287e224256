"""Unbonded bend regions as they are built: which copper layers share a bonded leaf.

In an air-gap (loose-leaf) build only the **bond ply** between chosen layer pairs is left out of the
bend region; every copper keeps its core, and a double-sided core (copper, core, copper) is one
leaf. Each outer leaf face takes its cover. In the stack template of :mod:`.space` a gap between
copper ``g`` and ``g + 1`` is ``[adhesive, film, adhesive]`` (``placement``: the adhesive below,
above or on both sides of the film). A *leaf boundary* at gap ``g``:

* needs a bond adhesive in the gap (an adhesiveless gap is a double-sided core: one leaf);
* keeps the film with one copper as its core and turns the adhesive on the other side into air:
  ``below`` (film, adhesive) -> the film stays with the upper copper; ``above`` -> with the lower
  copper; ``both`` -> with the upper copper when that copper is alone in its leaf, else the lower;
* puts the study's cover on the copper face that now borders air (the top cover build on the
  lower leaf's top face, the bottom cover build on the upper leaf's bottom face).

A grouping is buildable for a candidate when every boundary gap has its bond adhesive, every leaf
holding a single copper receives a film core, and the line keeps its reference plane(s) in its own
leaf (no boundary next to the signal copper). :func:`leaf_state` returns that per candidate; the
search treats an unbuildable candidate as infeasible (constraint ``leaves``).

``bend.leaves`` names the grouping (``[[1, 2], [3, 4]]``, 1-based copper layers per leaf) or lets
the search choose (``auto``, also the default of an unbonded region): then one decision variable
runs over every grouping with at least one boundary (mirror-symmetric ones in a symmetric study).
"""
from __future__ import annotations

from itertools import product
from typing import Any

import numpy as np

from strainline.optimizer.errors import StudyError

#: Film side codes of a boundary gap (see module docstring).
FILM_UP, FILM_DOWN = 1, 0


def _spec_error(study: Any, msg: str) -> StudyError:
    where = f"{study.source}: bend.leaves" if getattr(study, "source", "") else "bend.leaves"
    return StudyError(msg, where)


def leaf_options(study: Any, n_cu: int, sig_opts: tuple[int, ...]) -> list[tuple[bool, ...]]:
    """The boundary masks the space offers: one tuple of ``n_cu - 1`` booleans per grouping.

    A bonded region (or a single copper layer) has one option without boundaries.

    Raises
    ------
    StudyError
        ``bend.leaves`` is not a contiguous partition of the copper layers 1..N in order, or puts a
        boundary next to a fixed signal layer.
    """
    G = max(n_cu - 1, 0)
    if study.bend.region != "unbonded" or G == 0:
        return [tuple([False] * G)]
    spec = getattr(study.bend, "leaves", None)
    if spec is None or spec == "auto":
        masks = [m for m in product((False, True), repeat=G) if any(m)]
        if study.stack.symmetric:
            masks = [m for m in masks if m == m[::-1]]
        masks = [m for m in masks if any(not _touches(m, s) for s in sig_opts)]
        if not masks:
            raise _spec_error(study, "'auto' finds no grouping that keeps the line's reference plane(s) in its "
                                     "own leaf; use region: bonded")
        return masks
    flat = [int(c) for grp in spec for c in grp]
    if flat != list(range(1, n_cu + 1)):
        raise _spec_error(study, f"{[list(g) for g in spec]} must list the copper layers 1..{n_cu} once each, "
                                 "top to bottom, in contiguous leaves, e.g. [[1, 2], [3, 4]]")
    mask = [False] * G
    k = 0
    for grp in spec[:-1]:
        k += len(grp)
        mask[k - 1] = True
    if not any(mask):
        raise _spec_error(study, f"{[list(g) for g in spec]} is one leaf; give at least two leaves or use "
                                 "region: bonded")
    mask_t = tuple(mask)
    if all(_touches(mask_t, s) for s in sig_opts):
        raise _spec_error(study, f"{[list(g) for g in spec]} splits the line from its reference plane(s); the "
                                 "copper next to the signal layer must share its leaf")
    return [mask_t]


def _touches(mask: tuple[bool, ...], sig: int) -> bool:
    """True when a boundary borders copper ``sig`` (0-based)."""
    return any(mask[g] for g in (sig - 1, sig) if 0 <= g < len(mask))


def label(mask: tuple[bool, ...]) -> str:
    """``[1,2][3,4]``-style label of a boundary mask."""
    groups, cur = [], [1]
    for g, b in enumerate(mask):
        if b:
            groups.append(cur)
            cur = []
        cur.append(g + 2)
    groups.append(cur)
    return "".join("[" + ",".join(str(c) for c in grp) + "]" for grp in groups)


def leaf_state(space: Any, slots: dict[str, np.ndarray]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per candidate: boundary gaps, film side of each and whether the grouping is buildable.

    Returns
    -------
    boundary : ndarray of bool, (n, N-1)
    film_up : ndarray of bool, (n, N-1)
        At a boundary, True when the film stays with the upper copper (meaningless elsewhere).
    buildable : ndarray of bool, (n,)
    """
    N = space.n_cu
    G = N - 1
    n = slots["signal"].shape[0]
    tab = space.arr["leaf_mask"]                       # (n_opts, G)
    boundary = tab[slots["leaves"]] if G > 0 else np.zeros((n, 0), bool)
    ok = np.ones(n, bool)
    if G == 0 or not boundary.any():
        return boundary, np.zeros((n, G), bool), ok
    sigs = list(slots["signals"].T) if "signals" in slots else [slots["signal"]]   # every line's layer
    adh_m, adh_t = space.arr["adh_m"], space.arr["adh_t"]
    film_up = np.zeros((n, G), bool)
    for g in range(G):
        b = boundary[:, g]
        for sig in sigs:
            ok &= ~(b & ((sig == g) | (sig == g + 1)))   # each line's plane stays in its leaf
        bond = (adh_m[slots["adh"][:, g]] >= 0) & (adh_t[slots["adh"][:, g]] > 0)
        ok &= ~(b & ~bond)                                # no bond ply to leave out: a double-sided core
        upper_alone = (boundary[:, g - 1] if g > 0 else np.ones(n, bool))
        p = slots["place"][:, g]
        film_up[:, g] = (p == 0) | ((p == 2) & upper_alone)
    # every single-copper leaf receives a film core from a boundary next to it
    for i in range(N):
        above = boundary[:, i - 1] if i > 0 else np.ones(n, bool)
        below = boundary[:, i] if i < G else np.ones(n, bool)
        alone = above & below
        core = np.zeros(n, bool)
        if i > 0:
            core |= boundary[:, i - 1] & ~film_up[:, i - 1]
        if i < G:
            core |= boundary[:, i] & film_up[:, i]
        ok &= ~(alone & ~core)
    return boundary, film_up, ok


__all__ = ["leaf_options", "leaf_state", "label", "FILM_UP", "FILM_DOWN"]
