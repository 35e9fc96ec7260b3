"""JSON Schemas (draft 2020-12) of every JSON document qhat writes or prints.

Each ``<name>.schema.json`` here is package data, installed with qhat; the document it
describes carries ``schema_version`` (:data:`infer.reporting.jsonout.SCHEMA_VERSION`).
The schemas pin the top-level keys and their types and are permissive about nested
details (docs/reports.md, 'JSON documents').
"""

from __future__ import annotations

import json

__all__ = ["SCHEMAS", "schema_file", "load_schema"]

#: schema name -> the documents it describes
SCHEMAS = {
    "estimate-summary": "summary.json of qhat estimate, and qhat estimate --json",
    "check": "check.json of qhat check --out, and qhat check --json",
    "batch-summary": "summary.json of qhat batch, and qhat batch --json",
    "timing": "timing.json of qhat estimate and qhat batch",
    "equilibrium": "qhat equilibrium --json",
    "simulate": "qhat simulate --json",
    "forecast": "forecast.json of qhat forecast, and qhat forecast --json",
    "demo": "qhat demo --json",
    "compare": "compare.json of qhat compare --out, and qhat compare --json",
}


def schema_file(name: str):
    """The installed file ``<name>.schema.json`` (an :mod:`importlib.resources` path).

    Raises
    ------
    KeyError
        When ``name`` is not one of :data:`SCHEMAS`.
    """
    from importlib.resources import files

    if name not in SCHEMAS:
        raise KeyError(f"no schema {name!r}; the schemas are {', '.join(SCHEMAS)}")
    return files(__name__) / f"{name}.schema.json"


def load_schema(name: str) -> dict:
    """The schema ``name`` as a dict (see :data:`SCHEMAS`)."""
    return json.loads(schema_file(name).read_text(encoding="utf-8"))
