"""Construction notes of a handoff sheet, chosen to fit the candidate they sit beside.

A note never contradicts the candidate: the copper note explains the foil the search chose (it does
not tell the fabricator to use another one), the coverlay-fill note appears only when the candidate
has a coverlay adhesive against copper, and the model note names the bonded or the unbonded model.
Each note is ``(text, source)``.
"""
from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from strainline.optimizer.outputs.formatting import fmt, is_num

_SMITH_1 = "K. Smith, 'Decreasing Bend Radius and Improving Reliability, Part I', trade-magazine column (2019)"
_SMITH_2 = "K. Smith, 'Decreasing Bend Radius and Improving Reliability, Part II', trade-magazine column (2019)"
_TR484 = ("annealed wrought foil for severe or high-cycle flexing: IPC-TR-484 (1986) copper-foil ductility round "
          "robin")

#: Notes that hold for every candidate: (text, source).
ALWAYS: tuple[tuple[str, str], ...] = (
    ("No plated-through holes, vias or panel plating in the bend region; plate pads only (button plating) "
     "so the bend conductors stay at base-foil thickness.",
     f"button plating preferred: {_SMITH_1}; holes kept out of the bend: common practice, no source"),
    ("Route conductors perpendicular to the bend line and stagger them between adjacent layers "
     "(no conductors stacked directly over each other).",
     "common practice, no source"),
    ("No glass-reinforced material in the bend region (stiffeners and rigid sections end outside it).",
     "common practice, no source"),
)

_MODEL_SOURCE = ("composite-beam model (transformed section), e.g. Gere and Timoshenko, Mechanics of Materials; "
                 "yield caveat derived in the project's bend reference notes")


def _is_ra(layer: Mapping[str, Any], foil: Any) -> bool:
    ctype = layer.get("copper_type") or (getattr(foil, "copper_type", None) if foil is not None else None)
    text = str(ctype or layer.get("material") or "")
    return "rolled" in text or "annealed" in text


def copper_note(cand: Mapping[str, Any], foils: list[tuple[str, Any]], use: Any) -> tuple[str, str]:
    """The copper note: grain direction for rolled-annealed foil; for electrodeposited foil in the bend,
    why the candidate carries it and what the figures assume.

    Parameters
    ----------
    cand : mapping
        The front candidate.
    foils : list of (layer name, catalog foil record or None)
        The copper layers, top to bottom.
    use : str or None
        ``install`` or ``dynamic``.
    """
    layers = [lay for lay in cand.get("layers") or [] if lay.get("kind") == "copper"]
    ed = [name for (name, foil), lay in zip(foils, layers) if not _is_ra(lay, foil)]
    if not ed:
        return ("The copper chosen is rolled-annealed (annealed wrought) foil: run the foil grain (rolling direction) "
                "along the conductors through the bend and state the grain direction on the drawing.",
                f"{_TR484}; grain direction on drawings: {_SMITH_1}")
    bend = cand.get("bend") or {}
    life, need = bend.get("cycles_to_failure"), bend.get("required_cycles")
    meets = ""
    if is_num(life) and is_num(need):
        meets = (f" Its estimated life, {fmt(life, 3)} cycles with that foil's own fatigue data, "
                 f"{'meets' if life >= need else 'falls short of'} the {fmt(need, 3)} cycles required.")
    why = ("The search kept electrodeposited copper in " + ", ".join(ed) + " because this build is on the "
           "Pareto front: no other candidate is at least as good in every objective." + meets)
    if use == "dynamic":
        why += (" For repeated flexing rolled-annealed foil is the usual choice; a rolled-annealed build of "
                "this candidate is a different design with figures of its own.")
    return why, f"{_TR484}; the candidate's own figures (front.json)"


def coverlay_note(cand: Mapping[str, Any], families: list[str]) -> tuple[str, str] | None:
    """The coverlay-fill note, when a coverlay adhesive lies against copper."""
    layers = cand.get("layers") or []
    for j, lay in enumerate(layers):
        if families[j] != "adhesive" or "cover" not in str(lay.get("name") or "").lower():
            continue
        nb = [layers[k] for k in (j - 1, j + 1) if 0 <= k < len(layers)]
        if any(n.get("kind") == "copper" for n in nb):
            return ("Coverlay adhesive must fill between the conductors (about 1 mil of adhesive per ounce of "
                    "copper); voids let the copper bend on its own.", _SMITH_2)
    return None


def model_note(cand: Mapping[str, Any]) -> tuple[str, str]:
    """What the strain and life figures assume (bonded stack or separate leaves)."""
    if (cand.get("bend") or {}).get("region") == "unbonded":
        return ("Strain and life figures assume each leaf is an elastic, perfectly bonded stack bending about its "
                "own neutral axis, with the leaves free to slide on each other in the bend (air gaps); above the "
                "copper yield strain the worst-face strain is underestimated.",
                "transformed section per leaf (bending reference notes section 1.7); " + _MODEL_SOURCE)
    return ("Strain and life figures assume an elastic, perfectly bonded stack (transformed-section neutral axis); "
            "above the copper yield strain the worst-face strain is underestimated.", _MODEL_SOURCE)


def construction_notes(cand: Mapping[str, Any], foils: list[tuple[str, Any]], families: list[str],
                       use: Any) -> list[tuple[str, str]]:
    """Every construction note for one candidate, in sheet order."""
    out = [copper_note(cand, foils, use), *ALWAYS]
    cov = coverlay_note(cand, families)
    if cov is not None:
        out.append(cov)
    out.append(model_note(cand))
    return out


__all__ = ["ALWAYS", "copper_note", "coverlay_note", "model_note", "construction_notes"]
