"""One candidate of the design space as a :class:`~strainline.models.stackup.Stackup` record.

:func:`candidate_stackup` decodes a candidate's integer choices into named layers, top to bottom
(zero-thickness positions dropped, air gaps of an unbonded region merged). The front assembly
(:mod:`.front`) and the infeasible diagnosis (:mod:`.infeasible`) both build their cross-sections
with it; it lives here so that neither imports the other.
"""
from __future__ import annotations

import numpy as np

from strainline.models.stackup import Layer, Stackup
from strainline.optimizer.search.columns import cover_cols
from strainline.optimizer.search.space import Space


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
    # every copper layer that carries a line is a signal layer (several lines: :mod:`.linelayers`)
    sigs = ({int(v) for v in space.slots(np.asarray(x, np.int64).reshape(1, -1))["signals"][0]}
            if getattr(space, "multi", False) else {int(d.signal[0])})
    names = {0: "top cover film", 1: "top cover adhesive", L - 2: "bottom cover adhesive", L - 1: "bottom cover film"}
    for i in range(N):
        names[space.cu_col(i)] = f"L{i + 1} {'signal' if i in sigs else 'ground'}"
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


__all__ = ["candidate_stackup"]
