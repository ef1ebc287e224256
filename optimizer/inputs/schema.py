"""Generate the study JSON Schema (``catalogs/study.schema.json``) from the pydantic study model.

Run ``python -m strainline.optimizer.inputs.schema > catalogs/study.schema.json`` after changing
the study model; a test fails when the shipped file differs from what this prints. Catalog names
(foil weights, foils, dielectrics, adhesives, covers) are the shipped catalog's.
"""
from __future__ import annotations

import json
from typing import Any

SCHEMA_ID = "https://strainline.invalid/study.schema.json"


def _inline(node: Any, defs: dict[str, Any]) -> Any:
    """Replace every ``$ref`` by its definition (the study has no recursive types) and drop titles."""
    if isinstance(node, dict):
        if "$ref" in node:
            target = defs[node["$ref"].rsplit("/", 1)[-1]]
            merged = {**_inline(target, defs), **{k: _inline(v, defs) for k, v in node.items() if k != "$ref"}}
            return merged
        out = {}
        for k, v in node.items():
            if k == "title" and isinstance(v, str):
                continue
            if k == "default" and (v is None or isinstance(v, dict)):
                continue
            out[k] = v if k in ("default", "enum", "const") else _inline(v, defs)
        return out
    if isinstance(node, list):
        return [_inline(v, defs) for v in node]
    return node


def study_schema() -> dict[str, Any]:
    """The JSON Schema (draft 2020-12) of a study file, generated from :class:`StudyModel`."""
    from strainline.optimizer.inputs.study_model import StudyModel

    raw = StudyModel.model_json_schema(mode="validation")
    defs = raw.pop("$defs", {})
    body = _inline(raw, defs)
    body.pop("description", None)
    doc = (StudyModel.__doc__ or "").split()
    head = {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": SCHEMA_ID,
        "title": "strainline study",
        "description": " ".join(doc),
    }
    return {**head, **body}


def schema_text() -> str:
    """The schema as the shipped file holds it (2-space JSON, trailing newline)."""
    return json.dumps(study_schema(), indent=2, ensure_ascii=False) + "\n"


if __name__ == "__main__":  # pragma: no cover - a maintainer's command
    import sys

    sys.stdout.write(schema_text())
