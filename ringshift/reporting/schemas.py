"""The JSON Schemas of ringshift's JSON outputs, and a validator for them.

The schemas (JSON Schema draft 2020-12) ship in ``ringshift/data/schemas/``: ``prediction``,
``comparison``, ``pi_system``, ``trajectory`` and ``batch_record``. They describe layout version
:data:`ringshift.reporting.json.SCHEMA_VERSION` (``schema_version`` in every document). A comparison embeds a
prediction and a batch line carries one; they refer to the prediction schema by relative ``$ref``, resolved
against the ``$id`` of each schema (identifiers, not addresses to download from).

:func:`schema` reads one schema. :func:`validate` checks a document against the schema its
``ringshift_result`` names (a batch line written before it carried one is recognised by its ``ok`` field). Validation
needs the ``jsonschema`` package (>= 4.18), a test-only dependency imported only when :func:`validate` runs.
"""

from __future__ import annotations

import copy
import json
from functools import cache
from importlib import resources

from ringshift.errors import RingshiftError

__all__ = ["SCHEMA_NAMES", "RESULT_SCHEMAS", "SchemaValidationError", "schema", "schema_for", "validate"]

#: Names of the packaged schemas (file ``<name>.schema.json``).
SCHEMA_NAMES: tuple[str, ...] = ("prediction", "comparison", "pi_system", "trajectory", "batch_record")

#: ``ringshift_result`` of a document → name of its schema.
RESULT_SCHEMAS: dict[str, str] = {
    "prediction": "prediction",
    "comparison": "comparison",
    "pi_system": "pi_system",
    "trajectory_prediction": "trajectory",
    "batch_record": "batch_record",
}

_INSTALL_HINT = ("validating ringshift JSON needs the jsonschema package (>= 4.18), which is not installed: "
                 "pip install 'jsonschema>=4.18' (or pip install 'ringshift[test]')")


class SchemaValidationError(RingshiftError, ValueError):
    """A document does not match its schema.

    Attributes
    ----------
    schema_name : str
        The schema it was checked against.
    path : str
        JSON path of the first failing value, e.g. ``$.protons[0]`` (``$`` is the document itself).
    reason : str
        What is wrong there (jsonschema's message).
    n_errors : int
        How many errors the document has in all.
    """

    def __init__(self, schema_name: str, path: str, reason: str, n_errors: int = 1):
        self.schema_name, self.path, self.reason, self.n_errors = schema_name, path, reason, n_errors
        more = f" (and {n_errors - 1} more error{'s' if n_errors > 2 else ''})" if n_errors > 1 else ""
        super().__init__(" ".join(f"not a valid ringshift {schema_name} document: at {path}: {reason}{more}".split()))


@cache
def _text(name: str) -> str:
    if name.endswith(".schema.json"):
        name = name[: -len(".schema.json")]
    if name not in SCHEMA_NAMES:
        raise ValueError(f"unknown schema {name!r}; expected one of {', '.join(SCHEMA_NAMES)}")
    return (resources.files("ringshift") / "data" / "schemas" / f"{name}.schema.json").read_text(encoding="utf-8")


def schema(name: str) -> dict:
    """The packaged JSON Schema ``name`` (e.g. ``"prediction"``) as a new dict."""
    return copy.deepcopy(json.loads(_text(name)))


def schema_for(doc: dict) -> str:
    """Name of the schema a ringshift JSON document follows, from its ``ringshift_result`` (or ``ok``)."""
    if not isinstance(doc, dict):
        raise SchemaValidationError("JSON", "$", f"expected a JSON object, got {type(doc).__name__}")
    kind = doc.get("ringshift_result")
    if kind is None:
        if "ok" in doc:
            return "batch_record"
        raise SchemaValidationError("JSON", "$", "no 'ringshift_result' field (nor 'ok' of a batch line): not a "
                                                 "ringshift JSON output")
    if kind not in RESULT_SCHEMAS:
        raise SchemaValidationError("JSON", "$.ringshift_result", f"unknown kind {kind!r}; expected one of "
                                                                  f"{', '.join(RESULT_SCHEMAS)}")
    return RESULT_SCHEMAS[kind]


@cache
def _validator(name: str):
    try:
        from jsonschema import Draft202012Validator  # type: ignore[import-untyped]
        from referencing import Registry, Resource
    except ImportError:
        raise ImportError(_INSTALL_HINT) from None
    docs = [json.loads(_text(n)) for n in SCHEMA_NAMES]
    registry = Registry().with_resources((d["$id"], Resource.from_contents(d)) for d in docs)
    return Draft202012Validator(json.loads(_text(name)), registry=registry)


def validate(doc: dict, name: str | None = None) -> str:
    """Check a ringshift JSON document against its schema.

    Parameters
    ----------
    doc : dict
        Parsed JSON (``json.load``) of any ringshift output, or one batch line.
    name : str, optional
        Schema to use; default: chosen by the document's ``ringshift_result`` (:func:`schema_for`).

    Returns
    -------
    str
        The name of the schema the document matches.

    Raises
    ------
    SchemaValidationError
        The document does not match; the message names the JSON path of the first error (the most
        relevant one by :func:`jsonschema.exceptions.best_match`) and how many there are.
    ImportError
        jsonschema is not installed (the message says how to install it).
    """
    name = schema_for(doc) if name is None else name.removesuffix(".schema.json")
    validator = _validator(name)
    errors = sorted(validator.iter_errors(doc), key=lambda e: (e.json_path, e.message))
    if errors:
        from jsonschema.exceptions import best_match  # type: ignore[import-untyped]

        first = best_match(errors)             # the most relevant error; ties: the first in path order
        reason = first.message if len(first.message) <= 200 else first.message[:197] + "..."
        raise SchemaValidationError(name, first.json_path, reason, len(errors))
    return name
