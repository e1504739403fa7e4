"""The output layer: one rounding/formatting rule, the same numbering in JSON and CSV, schema_version.

Contract checks (no science): outputs of one result agree with each other.
"""

import csv
import io
import json

import pytest

from ringshift._numbers import rounded, text
from ringshift.io.structures import load_structure
from ringshift.reporting.json import SCHEMA_VERSION, prediction_to_dict, to_json
from ringshift.reporting.text import prediction_csv, prediction_table
from ringshift.runners.demo import demo_data_dir
from ringshift.shifts.prediction import predict

DEMO = demo_data_dir()


@pytest.mark.parametrize("value, spec, expected", [
    (-0.001, ".2f", "0.00"), (-0.001, "+.2f", "+0.00"), (-0.004, "8.2f", "    0.00"), (-1.234, "8.2f", "   -1.23"),
    (None, ".2f", "-"), (float("nan"), ".1f", "-"), (float("inf"), ".1f", "-"), (-0.0, ".3f", "0.000"),
], ids=["plain", "signed", "width", "negative", "none", "nan", "inf", "minus-zero"])
def test_text_never_prints_a_negative_zero(value, spec, expected):
    assert text(value, spec, missing="-") == expected


def test_rounded_is_json_safe():
    assert rounded(-1e-9) == 0.0 and str(rounded(-1e-9)) == "0.0"
    assert rounded(float("nan")) is None and rounded(None) is None
    assert rounded(1.234567, 2) == 1.23


@pytest.fixture(scope="module")
def toluene():
    # toluene: a methyl group and three kinds of ring H (common practice, no source)
    return predict(load_structure("Cc1ccccc1", conformers=2, seed=1))


def test_csv_and_json_number_groups_alike(toluene):
    doc = prediction_to_dict(toluene)
    rows = list(csv.DictReader(io.StringIO(prediction_csv(toluene))))
    by_index = {p["index"]: p for p in doc["protons"]}
    assert len(rows) == len(doc["protons"])
    for row in rows:
        p = by_index[int(row["index"])]
        assert int(row["group"]) == p["group"] and int(row["parent"]) == p["parent"]
        assert float(row["predicted_ppm"]) == p["predicted_ppm"]
    assert min(int(r["group"]) for r in rows) == 0


def test_json_carries_schema_version_and_no_negative_zero(toluene):
    out = to_json(prediction_to_dict(toluene))
    doc = json.loads(out)
    assert doc["schema_version"] == SCHEMA_VERSION
    assert "-0.0," not in out and "-0.0\n" not in out
    assert "-0.00 " not in prediction_table(toluene)


def test_no_negative_zero_in_compare_text_or_notes(capsys):
    # the demo spectrum puts TMS at -0.000 ppm (invented data): labels, notes and lists must say 0.00
    from ringshift.cli import main

    with pytest.raises(SystemExit) as info:
        main(["compare", str(DEMO / "fj14c.sdf"), str(DEMO / "fj14c_1H.jdx"), "--solvent", "CDCl3"])
    assert info.value.code == 0
    out = capsys.readouterr().out
    assert "-0.00" not in out and "-0.0 " not in out
