"""The shipped study JSON Schema is generated from the pydantic study model, never edited by hand."""
from __future__ import annotations

import json
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_shipped_schema_is_the_generated_one():
    # Regenerate with: python -m strainline.optimizer.inputs.schema > catalogs/study.schema.json
    from strainline.optimizer.inputs.schema import schema_text

    shipped = (ROOT / "catalogs" / "study.schema.json").read_text(encoding="utf-8")
    assert shipped == schema_text(), "catalogs/study.schema.json is stale: regenerate it from the study model"


def test_generated_schema_is_valid_draft_2020_12():
    import jsonschema  # test extra; the metaschema is the JSON Schema specification's own

    schema = json.loads((ROOT / "catalogs" / "study.schema.json").read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator.check_schema(schema)


def test_help_does_not_import_pydantic():
    # start-up: pydantic is imported only by the modules that validate input files
    import subprocess
    import sys

    code = ("import sys; from strainline.optimizer.inputs import study, catalog, stackup_file; "
            "print('pydantic' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False"
