"""The JSON outputs against their JSON Schemas (draft 2020-12, ``ringshift/data/schemas``).

The schemas are read from the source tree (not from an installed copy). Real outputs must validate: a
varied set of molecules (neutral, cation, fused, macrocycle, paratropic, no ring current, no current from
the Hückel-London step, a user circuit, no hydrogens), the bundled demo comparison (peak table and
JCAMP-DX), a report's results.json and pi.json, a trajectory and batch lines (ok and failed). A document
with a renamed, missing, retyped or unannounced field must not.
"""

from __future__ import annotations

import copy
import json
import sys
from pathlib import Path

import numpy as np
import pytest
from jsonschema import Draft202012Validator
from rdkit import Chem
from rdkit.Chem import AllChem
from referencing import Registry, Resource

from ringshift.cli import main
from ringshift.comparison.comparer import KIND_ALIASES
from ringshift.comparison.evidence import CLAIM_VERDICT, HYPOTHESIS_VERDICT, KASS_RAFTERY_2LNB
from ringshift.constants import BETA_MODELS, MODELS, TRAJECTORY_CURRENTS
from ringshift.io.structures import load_structure
from ringshift.reporting import schemas
from ringshift.reporting.json import SCHEMA_VERSION, prediction_to_dict, to_json
from ringshift.reporting.pi_summary import pi_summary
from ringshift.shifts.prediction import predict
from ringshift.spectra.peaks import PEAK_KINDS

REPO = Path(__file__).resolve().parents[2]
SCHEMA_DIR = REPO / "ringshift" / "data" / "schemas"
DEMO = REPO / "ringshift" / "data" / "demo"
NAMES = ("prediction", "comparison", "pi_system", "trajectory", "batch_record")

SCHEMAS = {n: json.loads((SCHEMA_DIR / f"{n}.schema.json").read_text(encoding="utf-8")) for n in NAMES}
REGISTRY = Registry().with_resources((s["$id"], Resource.from_contents(s)) for s in SCHEMAS.values())
VALIDATORS = {n: Draft202012Validator(s, registry=REGISTRY) for n, s in SCHEMAS.items()}

ANNULENE_18 = r"[H]/C1=C/C=C/C=C/C=C\C=C\C=C\C=C/C=C/C=C1\[H]"
PORPHINE = "c1cc2cc3ccc(cc4ccc(cc5ccc(cc1n2)[nH]5)n4)[nH]3"


def errors(name: str, doc) -> list[str]:
    return [f"{e.json_path}: {e.message}" for e in VALIDATORS[name].iter_errors(doc)]


def assert_valid(name: str, doc) -> None:
    errs = errors(name, doc)
    assert not errs, f"{len(errs)} schema errors ({name}):\n" + "\n".join(errs[:10])
    assert schemas.validate(doc) == name            # the packaged loader picks the same schema and agrees


def roundtrip(data: dict) -> dict:
    """What a user reads: the output written as JSON text and parsed back."""
    return json.loads(to_json(data))


def run_cli(argv) -> None:
    with pytest.raises(SystemExit) as exc:
        main(argv)
    assert exc.value.code == 0, f"ringshift {' '.join(map(str, argv))} exited with {exc.value.code}"


# ------------------------------------------------------------------------------------------------ schemas
def test_schema_files_are_valid_draft_2020_12():
    assert sorted(p.name for p in SCHEMA_DIR.iterdir()) == sorted(f"{n}.schema.json" for n in NAMES)
    for name, s in SCHEMAS.items():
        Draft202012Validator.check_schema(s)
        assert s["$schema"] == "https://json-schema.org/draft/2020-12/schema"
        assert s["$id"].endswith(f"/{SCHEMA_VERSION}/{name}.schema.json")
        assert s["properties"]["schema_version"]["const"] == SCHEMA_VERSION
        assert s["additionalProperties"] is False
        assert schemas.schema(name) == s                 # the loader reads these very files
    assert schemas.schema("prediction.schema.json") == SCHEMAS["prediction"]
    with pytest.raises(ValueError, match="unknown schema 'predictions'"):
        schemas.schema("predictions")


def _properties(node, where="#"):
    """(JSON pointer, subschema) of every entry of every ``properties`` in a schema."""
    if isinstance(node, dict):
        for key, sub in node.items():
            if key == "properties":
                for prop, s in sub.items():
                    yield f"{where}/properties/{prop}", s
            yield from _properties(sub, f"{where}/{key}")
    elif isinstance(node, list):
        for k, sub in enumerate(node):
            yield from _properties(sub, f"{where}/{k}")


def test_every_field_is_described():
    missing = [f"{name}.schema.json{ptr}" for name, s in SCHEMAS.items() for ptr, sub in _properties(s)
               if isinstance(sub, dict) and "description" not in sub and not ptr.startswith("#/if/")
               and "/then/" not in ptr and "/else/" not in ptr]
    assert missing == []
    text = json.dumps(SCHEMAS, ensure_ascii=False)
    for unit in ("Å", "ppm", "nA/T", "kcal/mol", "K.", "0-based", "J > 0 diatropic", "positive = downfield", "null"):
        assert unit in text, unit


def test_vocabularies_match_the_code():
    pred, comp, traj, pi = (SCHEMAS[n] for n in ("prediction", "comparison", "trajectory", "pi_system"))
    assert pred["properties"]["model"]["enum"] == list(MODELS)
    assert pred["$defs"]["provenance"]["properties"]["beta_model"]["enum"] == list(BETA_MODELS)
    assert pi["properties"]["beta_model"]["enum"] == list(BETA_MODELS)
    assert traj["$defs"]["provenance"]["properties"]["currents"]["enum"] == list(TRAJECTORY_CURRENTS)
    defs = comp["$defs"]
    assert defs["evidence"]["properties"]["kass_raftery"]["enum"] == [name for _, name in KASS_RAFTERY_2LNB]
    assert set(defs["evidence"]["properties"]["best"]["enum"]) == set(HYPOTHESIS_VERDICT.values())
    assert set(comp["properties"]["verdict"]["enum"]) == set(HYPOTHESIS_VERDICT.values()) | {"inconclusive"}
    assert set(defs["claim"]["properties"]["claim"]["enum"]) == set(CLAIM_VERDICT)
    # one name per peak kind: the JSON writes the peak-list kinds and still accepts the earlier names
    assert set(defs["peak"]["properties"]["kind"]["enum"]) == set(PEAK_KINDS) | set(KIND_ALIASES)


# ------------------------------------------------------------------------------------- real outputs valid
def _one_user_circuit_without_pi(d, pi):
    c = d["circuits"][0]
    return c["label"] == "U1" and c["pi_electrons"] is None and c["huckel_class"] is None


MOLECULES = [
    # id, SMILES, conformers, predict options, what makes the case (checked, so the variety is real)
    ("benzene", "c1ccccc1", 1, {},
     lambda d, pi: d["circuits"][0]["huckel_class"] == "4n+2" and len(d["protons"]) == 6),
    ("tropylium", "C1=CC=C[CH+]C=C1", 1, {"model": "johnson-bovey"},
     lambda d, pi: d["charge"] == 1 and pi["charge"] == 1 and d["protons"][0]["charge_ppm"] > 0),
    ("naphthalene", "c1ccc2ccccc2c1", 1, {"model": "haigh-mallion"},
     lambda d, pi: len(d["circuits"]) == 2 and d["perimeters"][0]["current_nA_per_T"] is None),
    ("18-annulene", ANNULENE_18, 2, {},
     lambda d, pi: d["circuits"][0]["kind"] == "macrocycle" and d["circuits"][0]["size"] == 18),
    ("porphine", PORPHINE, 1, {"model": "dipole"}, lambda d, pi: any(c["kind"] == "macrocycle" for c in d["circuits"])),
    ("pentalene", "C1=CC2=CC=CC2=C1", 1, {}, lambda d, pi: d["circuits"][0]["current_nA_per_T"] < 0),
    ("cyclohexane", "C1CCCCC1", 1, {},
     lambda d, pi: d["circuits"] == [] and pi["levels"] is None and pi["huckel_class"] is None),
    ("cyclobutadiene-uniform-beta", "C1=CC=C1", 1, {"beta_model": "uniform"},
     lambda d, pi: d["circuits"][0]["current_nA_per_T"] is None and pi["levels"]["open_shell"]),
    ("user-circuit-off-pi", "C1CCCCC1", 1, {"currents": "benzene", "user_circuits": [[0, 1, 2, 3, 4, 5]]},
     _one_user_circuit_without_pi),
    ("benzene-set-current-network", "c1ccccc1", 1,
     {"model": "network", "set_current": {"R1": -6.0}, "scale": {"R1": 0.5}},
     lambda d, pi: d["circuits"][0]["current_nA_per_T"] == -3.0 and d["model"] == "network"),
    ("no-hydrogens", "O=C1C(=O)C(=O)C1=O", 1, {}, lambda d, pi: d["protons"] == [] and d["groups"] == []),
]


@pytest.mark.parametrize("smiles,conformers,options,check", [m[1:] for m in MOLECULES], ids=[m[0] for m in MOLECULES])
def test_prediction_and_pi_summary_validate(smiles, conformers, options, check):
    s = load_structure(smiles, conformers=conformers)
    pred = predict(s, **options)
    doc = roundtrip(prediction_to_dict(pred))
    pi = roundtrip(pi_summary(s, beta_model=options.get("beta_model", "scf"), prediction=pred))
    assert check(doc, pi)
    assert_valid("prediction", doc)
    assert_valid("pi_system", pi)


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    """Real CLI outputs, parsed: demo comparisons, a report, a trajectory and batch lines."""
    tmp = tmp_path_factory.mktemp("schemas")
    out = {}
    run_cli(["compare", str(DEMO / "fj14c.sdf"), str(DEMO / "fj14c_peaks.csv"), "--claim", "aromatic",
             "--format", "json", "-o", str(tmp / "c1.json")])
    run_cli(["compare", str(DEMO / "fj14c.sdf"), str(DEMO / "fj14c_1H.jdx"), "--format", "json",
             "-o", str(tmp / "c2.json")])
    out["comparison_table"] = json.loads((tmp / "c1.json").read_text(encoding="utf-8"))
    out["comparison_jcamp"] = json.loads((tmp / "c2.json").read_text(encoding="utf-8"))

    peaks = tmp / "p.csv"
    peaks.write_text("shift_ppm,integral\n7.36,6\n", encoding="utf-8")
    run_cli(["report", "c1ccccc1", str(peaks), "-o", str(tmp / "rep"), "--conformers", "1", "--quiet"])
    out["report_results"] = json.loads((tmp / "rep" / "results.json").read_text(encoding="utf-8"))
    out["report_pi"] = json.loads((tmp / "rep" / "pi.json").read_text(encoding="utf-8"))

    # benzene frames with slightly moved atoms and energies in the comment lines
    m = Chem.AddHs(Chem.MolFromSmiles("c1ccccc1"))
    AllChem.EmbedMolecule(m, randomSeed=7)
    xyz0 = m.GetConformer().GetPositions()
    rng = np.random.default_rng(0)
    symbols = [a.GetSymbol() for a in m.GetAtoms()]
    text = ""
    for k in range(4):
        xyz = xyz0 + rng.normal(scale=0.03, size=xyz0.shape)
        text += f"{len(symbols)}\nframe {k + 1} energy={0.2 * k:.2f}\n"
        text += "".join(f"{el} {x:.5f} {y:.5f} {z:.5f}\n" for el, (x, y, z) in zip(symbols, xyz))
    frames = tmp / "benzene.xyz"
    frames.write_text(text, encoding="utf-8")
    run_cli(["trajectory", str(frames), "--format", "json", "-o", str(tmp / "t1.json")])
    run_cli(["trajectory", str(frames), "--format", "json", "--weights", "boltzmann", "--exchange", "auto",
             "--currents", "huckel-per-frame", "-o", str(tmp / "t2.json")])
    out["trajectory"] = json.loads((tmp / "t1.json").read_text(encoding="utf-8"))
    out["trajectory_exchange"] = json.loads((tmp / "t2.json").read_text(encoding="utf-8"))

    lib = tmp / "lib.smi"
    lib.write_text("c1ccccc1 benzene\nC1CC(( broken\nC1=CC=C[CH+]C=C1 tropylium\n", encoding="utf-8")
    run_cli(["batch", str(lib), "-o", str(tmp / "out.jsonl"), "--conformers", "1", "--quiet"])
    out["batch"] = [json.loads(line) for line in (tmp / "out.jsonl").read_text(encoding="utf-8").splitlines()]
    return out


def test_demo_comparisons_validate(outputs):
    table, jcamp = outputs["comparison_table"], outputs["comparison_jcamp"]
    assert table["claim"]["outcome"] == "supported" and jcamp["claim"] is None
    assert jcamp["unassigned_peaks"] and "tms" in {p["kind"] for p in jcamp["peaks"]}
    assert all(p["assigned_h"] >= 0 for p in table["peaks"]) and table["verdict"] == "diatropic"
    assert_valid("comparison", table)
    assert_valid("comparison", jcamp)


def test_report_files_validate(outputs):
    assert_valid("comparison", outputs["report_results"])
    assert_valid("pi_system", outputs["report_pi"])


def test_trajectory_validates(outputs):
    plain, fast = outputs["trajectory"], outputs["trajectory_exchange"]
    assert plain["n_frames"] == 4 and plain["exchange_groups"] == [] and plain["weights"] == "uniform"
    assert fast["exchange_groups"] and fast["weights"] == "boltzmann"
    assert fast["provenance"]["currents"] == "huckel-per-frame"
    assert_valid("trajectory", plain)
    assert_valid("trajectory", fast)


def test_batch_lines_validate(outputs):
    lines = outputs["batch"]
    assert [r["ok"] for r in lines] == [True, False, True]
    for rec in lines:
        assert_valid("batch_record", rec)


# -------------------------------------------------------------------------------- changed fields must fail
def _rename(obj: dict, old: str, new: str) -> None:
    obj[new] = obj.pop(old)


MUTATIONS = [
    # (id, output, schema, change, JSON path the error must name)
    ("prediction-renamed-predicted_ppm", "prediction", "prediction",
     lambda d: _rename(d["protons"][0], "predicted_ppm", "predicted"), "$.protons[0]"),
    ("prediction-missing-current", "prediction", "prediction",
     lambda d: d["circuits"][0].pop("current_nA_per_T"), "$.circuits[0]"),
    ("prediction-number-as-string", "prediction", "prediction",
     lambda d: d["protons"][0].update(ring_current_ppm="1.04"), "$.protons[0].ring_current_ppm"),
    ("prediction-unannounced-field", "prediction", "prediction", lambda d: d.update(new_field=1), "$"),
    ("prediction-other-version", "prediction", "prediction", lambda d: d.update(schema_version="3.0"),
     "$.schema_version"),
    ("prediction-circuit-label-key", "prediction", "prediction",
     lambda d: d["groups"][0]["ring_current_by_circuit_ppm"].update(ring=1.0),
     "$.groups[0].ring_current_by_circuit_ppm"),
    ("comparison-old-ref_ppm", "comparison", "comparison",
     lambda d: _rename(d["assignment"][0], "reference_ppm", "ref_ppm"), "$.assignment[0]"),
    ("comparison-old-needed_ref_z", "comparison", "comparison",
     lambda d: _rename(d["assignment"][0], "needed_reference_z", "needed_ref_z"), "$.assignment[0]"),
    ("comparison-missing-verdict", "comparison", "comparison", lambda d: d.pop("verdict"), "$"),
    ("comparison-missing-assigned_h", "comparison", "comparison", lambda d: d["peaks"][0].pop("assigned_h"),
     "$.peaks[0]"),
    ("comparison-unknown-verdict", "comparison", "comparison", lambda d: d.update(verdict="aromatic"),
     "$.verdict"),
    ("comparison-null-fitted-current", "comparison", "comparison",
     lambda d: d["circuits"][0].update(current_nA_per_T=None), "$.circuits[0].current_nA_per_T"),
    ("comparison-embedded-prediction", "comparison", "comparison",
     lambda d: _rename(d["prediction"]["protons"][0], "predicted_ppm", "predicted"), "$.prediction.protons[0]"),
    ("pi-missing-pi_electrons", "pi", "pi_system", lambda d: d.pop("pi_electrons"), "$"),
    ("pi-circuit-with-model", "pi", "pi_system", lambda d: d["circuits"][0].update(model="polygon"),
     "$.circuits[0]"),
    ("pi-levels-extra-parameter", "pi", "pi_system", lambda d: d["levels"]["parameters"].update(extra="x"),
     "$.levels.parameters"),
    ("trajectory-renamed-spread", "trajectory", "trajectory",
     lambda d: _rename(d["protons"][0], "spread_ppm", "conformer_spread_ppm"), "$.protons[0]"),
    ("trajectory-frame-zero", "trajectory", "trajectory", lambda d: d["frames"]["numbers"].__setitem__(0, 0),
     "$.frames.numbers[0]"),
    ("batch-ok-without-result", "batch_ok", "batch_record", lambda d: d.pop("result"), "$"),
    ("batch-ok-with-error", "batch_ok", "batch_record", lambda d: d.update(error="x"), "$.error"),
    ("batch-failed-with-result", "batch_failed", "batch_record", lambda d: d.update(result={}), "$.result"),
    ("batch-result-renamed-field", "batch_ok", "batch_record",
     lambda d: _rename(d["result"]["protons"][0], "predicted_ppm", "predicted"), "$.result.protons[0]"),
]


@pytest.fixture(scope="module")
def documents(outputs):
    table = outputs["comparison_table"]
    return {"prediction": table["prediction"], "comparison": table, "pi": outputs["report_pi"],
            "trajectory": outputs["trajectory"], "batch_ok": outputs["batch"][0], "batch_failed": outputs["batch"][1]}


@pytest.mark.parametrize("output,name,change,path", [m[1:] for m in MUTATIONS], ids=[m[0] for m in MUTATIONS])
def test_changed_field_fails(documents, output, name, change, path):
    doc = copy.deepcopy(documents[output])
    assert errors(name, doc) == []                      # the original is valid: the failure is the change's
    change(doc)
    assert errors(name, doc), "the schema accepted a changed document"
    with pytest.raises(schemas.SchemaValidationError) as exc:
        schemas.validate(doc, name)
    assert exc.value.path == path and path in str(exc.value) and exc.value.schema_name == name


# ------------------------------------------------------------------------------------------------- loader
def test_validate_chooses_the_schema_and_refuses_unknown_documents(documents):
    assert schemas.validate(documents["batch_failed"]) == "batch_record"     # no ringshift_result: by "ok"
    wrong = dict(documents["prediction"], ringshift_result="predictions")
    with pytest.raises(schemas.SchemaValidationError, match=r"\$\.ringshift_result: unknown kind 'predictions'"):
        schemas.validate(wrong)
    with pytest.raises(schemas.SchemaValidationError, match=r"\$\.ringshift_result"):
        schemas.validate(wrong, "prediction")
    with pytest.raises(schemas.SchemaValidationError, match="no 'ringshift_result'"):
        schemas.validate({"protons": []})
    with pytest.raises(schemas.SchemaValidationError, match="expected a JSON object"):
        schemas.validate([documents["prediction"]])
    with pytest.raises(schemas.SchemaValidationError, match=r"at \$: 'verdict' is a required property"):
        schemas.validate({k: v for k, v in documents["comparison"].items() if k != "verdict"})


def test_validate_without_jsonschema_says_how_to_install(monkeypatch, documents):
    schemas._validator.cache_clear()
    monkeypatch.setitem(sys.modules, "jsonschema", None)
    monkeypatch.setitem(sys.modules, "referencing", None)
    try:
        with pytest.raises(ImportError, match=r"pip install 'jsonschema>=4\.18'"):
            schemas.validate(documents["prediction"])
        assert schemas.schema("prediction")["title"] == "ringshift prediction"   # reading needs no jsonschema
    finally:
        schemas._validator.cache_clear()
