"""The public Python API (ringshift.api, re-exported by ``import ringshift``) and the notebook display
of results (ringshift._display): names, equivalent inputs, short repr, HTML, DataFrames, error names,
and the examples of README.md's "Python API" section and of the docstrings.
"""

from __future__ import annotations

import doctest
import html.parser
import importlib.metadata
import json
import re
import subprocess
import sys
from importlib.resources import files
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

import ringshift
import ringshift.api
from ringshift.errors import InputError, OutputError

ROOT = Path(__file__).resolve().parent.parent
DEMO = files("ringshift") / "data" / "demo"
SDF = DEMO / "fj14c.sdf"
PEAKS = DEMO / "fj14c_peaks.csv"
API_NAMES = ["load_structure", "predict", "read_peaks", "compare", "report", "write_nmredata"]


# --------------------------------------------------------------------------------------- fixtures
@pytest.fixture(scope="module")
def benzene():
    return ringshift.predict("c1ccccc1", conformers=1)


@pytest.fixture(scope="module")
def fj14c():
    return ringshift.predict(SDF)


@pytest.fixture(scope="module")
def result(fj14c):
    return ringshift.compare(fj14c, PEAKS, claim="aromatic")


def _flat(record: dict, prefix: str = "") -> dict:
    """Independent flattening of a JSON record: dict values become ``parent.key`` entries."""
    out = {}
    for k, v in record.items():
        if isinstance(v, dict):
            out.update(_flat(v, f"{prefix}{k}."))
        else:
            out[f"{prefix}{k}"] = v
    return out


def _frame_records(df) -> list[dict]:
    """DataFrame rows as plain Python values (NaN from a missing float back to None)."""
    rows = []
    for rec in df.to_dict("records"):
        rows.append({k: (None if isinstance(v, float) and np.isnan(v) else v) for k, v in rec.items()})
    return rows


# ------------------------------------------------------------------------------------------ names
def test_top_level_names_and_all():
    assert ringshift.__all__ == API_NAMES
    for name in API_NAMES:
        assert callable(getattr(ringshift, name)), name
        assert getattr(ringshift, name) is getattr(ringshift.api, name)
        assert name in dir(ringshift)
    assert ringshift.__version__ == importlib.metadata.version("ringshift")


def test_compare_and_report_stay_functions_after_subpackage_imports():
    # the stage subpackages have names of their own, so importing them never rebinds the functions
    import ringshift.comparison.run
    import ringshift.reporting.json

    assert ringshift.compare is ringshift.api.compare
    assert ringshift.report is ringshift.api.report
    from ringshift.comparison.run import run_compare
    from ringshift.reporting import json as report_json

    assert callable(run_compare) and callable(report_json.prediction_to_dict)
    assert ringshift.reporting.json is report_json and ringshift.comparison.run.run_compare is run_compare


def test_import_ringshift_loads_no_heavy_dependency():
    # `import ringshift` must stay cheap: the pipeline (RDKit, NumPy, SciPy, matplotlib, pandas)
    # loads on the first call, not at import
    code = ("import sys, ringshift; print(','.join(m for m in ('numpy', 'scipy', 'rdkit', 'matplotlib', "
            "'pandas', 'ringshift.shifts') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


# ------------------------------------------------------------------------------- equivalent inputs
def _numbers(pred) -> np.ndarray:
    return np.array([[p.index, p.parent, p.group, p.ring_current_ppm, p.reference_ppm, p.predicted_ppm]
                     for p in pred.protons], dtype=float)


def test_predict_from_path_str_pathlike_and_structure_agree(fj14c):
    s = ringshift.load_structure(str(SDF))
    by_structure = ringshift.predict(s)
    by_str = ringshift.predict(str(SDF))
    assert len(fj14c.protons) == 20
    # same input, same deterministic pipeline: identical numbers
    assert_allclose(_numbers(by_structure), _numbers(fj14c), rtol=0, atol=0)
    assert_allclose(_numbers(by_str), _numbers(fj14c), rtol=0, atol=0)
    assert [c.current_nA_per_T for c in by_structure.circuits] == [c.current_nA_per_T for c in fj14c.circuits]


def test_predict_from_smiles_agrees_with_the_same_geometry_from_a_file(tmp_path):
    from rdkit import Chem

    # naphthalene: two 6-rings and the 10-membered perimeter
    by_smiles = ringshift.predict("c1ccc2ccccc2c1", conformers=1, seed=7)
    s = ringshift.load_structure("c1ccc2ccccc2c1", conformers=1, seed=7)
    assert_allclose(_numbers(ringshift.predict(s)), _numbers(by_smiles), rtol=0, atol=0)
    # the same coordinates written to a MOL file (atom order kept; 4 decimals in Å) give the same shifts
    mol_file = tmp_path / "naphthalene.mol"
    mol_file.write_text(Chem.MolToMolBlock(s.mol, confId=0))
    by_file = ringshift.predict(mol_file)
    assert [p.index for p in by_file.protons] == [p.index for p in by_smiles.protons]
    # rounding the coordinates to 1e-4 Å moves a shift by far less than 1e-3 ppm
    assert_allclose(_numbers(by_file), _numbers(by_smiles), rtol=0, atol=1e-3)


def test_compare_accepts_path_structure_prediction_and_peaklist(fj14c, result):
    s = ringshift.load_structure(SDF)
    peaks = ringshift.read_peaks(PEAKS, n_hydrogens=len(fj14c.protons))
    for res in (ringshift.compare(SDF, PEAKS, claim="aromatic"), ringshift.compare(s, peaks, claim="aromatic")):
        assert res.comparison.verdict == result.comparison.verdict
        assert_allclose([c.current_nA_per_T for c in res.comparison.circuits],
                        [c.current_nA_per_T for c in result.comparison.circuits], rtol=1e-12)
        assert [a.peak_label for a in res.comparison.assignment] == \
            [a.peak_label for a in result.comparison.assignment]


def test_compare_finds_the_hidden_current_of_the_demo(result):
    # the demo spectrum was simulated with a hidden +14.0 nA/T macrocycle current (demo_spectra/README.md,
    # invented data); the fit must recover it within its own 95 % interval
    fit = next(c for c in result.comparison.circuits if c.label == result.comparison.verdict_circuit)
    assert result.comparison.verdict == "diatropic"
    assert fit.ci95_nA_per_T[0] <= 14.0 <= fit.ci95_nA_per_T[1]


def test_benzene_shift_is_near_experiment(benzene):
    # benzene 1H: 7.36 ppm in CDCl3 (Gottlieb, Kotlyar & Nudelman, J. Org. Chem. 1997, 62, 7512).
    # Tolerance 0.5 ppm: the model's stated error of one predicted shift is 0.3 ppm (compare's default
    # noise_ppm), so 0.5 ppm is a loose sanity bound, not a precision claim.
    df = benzene.to_frame()
    assert_allclose(df["predicted_ppm"], 7.36, atol=0.5)
    # outside protons of a diatropic ring are deshielded (design notes §4 sign convention)
    assert (df["ring_current_ppm"] > 0).all()


# -------------------------------------------------------------------------------------------- repr
def test_prediction_repr_is_short_and_informative(benzene, fj14c):
    text = repr(benzene)
    assert len(text) < 200 and "\n" not in text
    assert text.startswith("<Prediction ") and text.endswith(">")
    # benzene's Hueckel-London current is normalised to the benzene value, 12.0 nA/T, by definition
    for part in ("C6H6", "1 circuit", "R1 6π +12.0 nA/T", "6 H in 1 group", "model johnson-bovey", "1 conformer"):
        assert part in text, (part, text)
    assert "C20H20" in repr(fj14c) and "M1 14π" in repr(fj14c)
    assert "Prediction(" not in str(benzene)  # the dataclass field dump is gone from str() too


def test_repr_stays_short_for_many_circuits_and_a_long_name():
    # coronene: many rings and macrocycles; its name is the (long) SMILES
    pred = ringshift.predict("c1cc2ccc3ccc4ccc5ccc6ccc1c7c2c3c4c5c67", conformers=1)
    text = repr(pred)
    assert len(pred.circuits) > 3
    assert len(text) < 200 and "\n" not in text
    assert f"{len(pred.circuits)} circuits" in text and "more" in text


def test_comparison_repr(result):
    text = repr(result)
    assert len(text) < 200 and "\n" not in text
    for part in ("<CompareResult ", "diatropic", "M1", "nA/T", "4/4 groups", "claim 'aromatic' supported"):
        assert part in text, (part, text)


# -------------------------------------------------------------------------------------------- HTML
class _TagChecker(html.parser.HTMLParser):
    VOID = {"br", "hr", "img", "meta", "input", "col", "wbr"}

    def __init__(self):
        super().__init__()
        self.stack: list[str] = []
        self.seen: list[str] = []
        self.errors: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.seen.append(tag)
        if tag not in self.VOID:
            self.stack.append(tag)

    def handle_endtag(self, tag):
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"unexpected </{tag}> with open {self.stack}")
        else:
            self.stack.pop()


def _check_html(text: str) -> _TagChecker:
    checker = _TagChecker()
    checker.feed(text)
    checker.close()
    assert not checker.errors and not checker.stack, (checker.errors, checker.stack)
    return checker


def test_prediction_html_is_a_balanced_table(fj14c):
    text = fj14c._repr_html_()
    tags = _check_html(text).seen
    assert tags.count("table") == 2          # circuits and proton groups
    # header row + one row per circuit, header row + one row per group
    assert tags.count("tr") == (1 + len(fj14c.circuits)) + (1 + len(fj14c.groups))
    assert "&lt;Prediction" in text         # the repr is escaped
    assert all(g.label in text for g in fj14c.groups)


def test_comparison_html_shows_verdict_currents_and_assignment(result):
    text = result._repr_html_()
    tags = _check_html(text).seen
    assert tags.count("table") == 2
    assert "verdict diatropic" in text and "Assignment" in text
    for a in result.comparison.assignment:
        assert f"<td>{a.label}</td>" in text and f"<td>{a.peak_label}</td>" in text


# ------------------------------------------------------------------------------------------ frames
def test_prediction_frame_rows_columns_and_values_match_the_json(fj14c):
    from ringshift.reporting.json import prediction_to_dict

    pytest.importorskip("pandas")
    data = prediction_to_dict(fj14c)
    for table, key in (("protons", "protons"), ("groups", "groups"), ("circuits", "circuits")):
        df = fj14c.to_frame(table)
        expected = [_flat(r) for r in data[key]]
        assert len(df) == len(data[key])
        assert list(df.columns) == list(expected[0])
        assert _frame_records(df) == expected, table
    df = fj14c.to_frame()
    assert len(df) == len(fj14c.protons)
    for col in ("index", "parent", "group", "predicted_ppm", "ring_current_ppm", "reference_ppm",
                "ring_current_by_circuit_ppm.M1"):
        assert col in df.columns
    # predicted = reference + ring current + charge term; each JSON value is rounded to 1e-4 ppm
    assert_allclose(df["predicted_ppm"], df["reference_ppm"] + df["ring_current_ppm"] + df["charge_ppm"],
                    rtol=0, atol=2e-4)


def test_comparison_frame_has_one_row_per_peak_joined_with_its_group(result):
    from ringshift.reporting.json import comparison_to_dict

    pytest.importorskip("pandas")
    data = comparison_to_dict(result)
    df = result.to_frame()
    assert len(df) == len(data["peaks"]) == 4    # each demo peak holds one group
    rows = _frame_records(df)
    by_index = {a["index"]: a for a in data["assignment"]}
    for row, peak in zip(rows, data["peaks"]):
        assert {k: row[k] for k in peak} == peak
        group = by_index[peak["groups"][0]]
        assert {k[len("assignment."):]: v for k, v in row.items() if k.startswith("assignment.")} == group
    assert list(df.columns[: len(data["peaks"][0])]) == list(data["peaks"][0])
    assignment = result.to_frame("assignment")
    assert _frame_records(assignment) == data["assignment"]
    circuits = result.to_frame("circuits")
    assert _frame_records(circuits) == [_flat(c) for c in data["circuits"]]


def test_unassigned_peak_row_has_empty_assignment(fj14c):
    from ringshift.spectra.peaks import Peak, PeakList

    pytest.importorskip("pandas")
    listed = ringshift.read_peaks(PEAKS, n_hydrogens=20)
    # an extra 1 H peak far from every prediction: the 20 H are all placed on the four real peaks
    extra = PeakList(peaks=(*listed.peaks, Peak(shift_ppm=12.5, integral=1.0, label="stray")), source="test")
    res = ringshift.compare(fj14c, extra)
    df = res.to_frame()
    stray = df[df["label"] == "stray"]
    assert len(stray) == 1
    assert stray["groups"].iloc[0] == []
    assert stray["assignment.label"].isna().all()


def test_trajectory_prediction_display():
    from ringshift.reporting.json import trajectory_to_dict
    from ringshift.runners.trajectory import predict_trajectory_file

    pytest.importorskip("pandas")
    tp = predict_trajectory_file(str(SDF))
    text = repr(tp)
    assert len(text) < 200 and text.startswith("<TrajectoryPrediction ") and "1 frame" in text
    _check_html(tp._repr_html_())
    data = trajectory_to_dict(tp)
    assert _frame_records(tp.to_frame()) == [_flat(r) for r in data["protons"]]


def test_unknown_table_names_the_argument(benzene):
    pytest.importorskip("pandas")
    with pytest.raises(InputError) as exc:
        benzene.to_frame("peaks")
    assert exc.value.source == "table" and "'protons'" in str(exc.value)


def test_to_frame_without_pandas_says_how_to_install(benzene, monkeypatch):
    monkeypatch.setitem(sys.modules, "pandas", None)   # `import pandas` now raises ImportError
    with pytest.raises(ImportError) as exc:
        benzene.to_frame()
    message = str(exc.value)
    assert "\n" not in message
    assert "pip install 'ringshift[frames]'" in message


# ------------------------------------------------------------------------------------------ errors
_BAD_INPUTS = [
    ("model", lambda s, p: ringshift.predict(s, model="ring")),
    ("currents", lambda s, p: ringshift.predict(s, currents="aromatic")),
    ("beta_model", lambda s, p: ringshift.predict(s, beta_model="huckel")),
    ("conformers", lambda s, p: ringshift.predict("c1ccccc1", conformers=0)),
    ("conformers", lambda s, p: ringshift.predict(s, conformers=5)),
    ("structure", lambda s, p: ringshift.predict(3.14)),
    ("scale", lambda s, p: ringshift.predict(s, scale={"M1": "half"})),
    ("set_current", lambda s, p: ringshift.predict(s, set_current={"Z9": 3.0})),
    ("user_circuits", lambda s, p: ringshift.predict(s, user_circuits=[[0, 1]])),
    ("user_circuits", lambda s, p: ringshift.predict(s, user_circuits="0,1,2")),
    ("model", lambda s, p: ringshift.predict(s, model="network", currents="benzene")),
    ("claim", lambda s, p: ringshift.compare(p, PEAKS, claim="aromaticity")),
    ("noise_ppm", lambda s, p: ringshift.compare(p, PEAKS, noise_ppm=0)),
    ("noise_ppm", lambda s, p: ringshift.compare(p, PEAKS, noise_ppm="guess")),
    ("solvent", lambda s, p: ringshift.compare(p, PEAKS, solvent="CCl4-d")),
    ("peaks", lambda s, p: ringshift.compare(p, [7.2, 7.3])),
    ("model", lambda s, p: ringshift.compare(p, PEAKS, model="dipole")),
    ("seed", lambda s, p: ringshift.predict("c1ccccc1", conformers=1, seed=-1)),
    ("claim", lambda s, p: ringshift.report(p, claim="aromatic", out_dir="unused")),
    ("path", lambda s, p: ringshift.read_peaks(None)),
]


@pytest.mark.parametrize("param, call", _BAD_INPUTS, ids=[f"{k}-{i}" for i, (k, _) in enumerate(_BAD_INPUTS)])
def test_bad_input_names_the_api_argument(param, call, fj14c):
    with pytest.raises(InputError) as exc:
        call(fj14c.structure, fj14c)
    # an unknown circuit label may be named for both mappings by the pipeline
    names = {param, "scale/set_current"} if param == "set_current" else {param}
    assert exc.value.source in names
    assert str(exc.value).startswith(f"{exc.value.source}: ")
    assert "\n" not in str(exc.value)
    assert not re.search(r"(^|\s|\()--[a-z]", str(exc.value)), str(exc.value)   # no command-line option


def test_library_errors_name_arguments_and_outputs_ask_for_force():
    # the library words errors with argument names (ringshift._validation); the API only words "force"
    from ringshift.api import _api_names

    with pytest.raises(OutputError) as exc2, _api_names():
        raise OutputError("out: already exists; use force to replace it")
    assert str(exc2.value) == "out: already exists; pass force=True to replace it"
    s = ringshift.load_structure("c1ccccc1", conformers=1)
    with pytest.raises(InputError) as exc:
        ringshift.predict(s, scale={"Z9": 0.5})
    assert exc.value.source == "scale" and "--" not in str(exc.value)


def test_report_refuses_an_existing_folder_before_any_work(tmp_path, fj14c):
    with pytest.raises(OutputError) as exc:
        ringshift.report(fj14c, out_dir=tmp_path)
    assert "force=True" in str(exc.value) and "--force" not in str(exc.value)
    with pytest.raises(InputError) as exc2:
        ringshift.report(ringshift.compare(fj14c, PEAKS), PEAKS, out_dir=tmp_path / "new")
    assert exc2.value.source == "peaks"
    assert not (tmp_path / "new").exists()


# ---------------------------------------------------------------------------- examples that run
def test_docstring_examples_of_the_api_run():
    finder = doctest.DocTestFinder()
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS)
    import ringshift._api_outputs  # report and write_nmredata are defined there and re-exported by ringshift.api

    tests = [t for m in (ringshift.api, ringshift._api_outputs) for t in finder.find(m) if t.examples]
    assert {t.name.rsplit(".", 1)[-1] for t in tests} >= set(API_NAMES)
    for t in tests:
        runner.run(t)
    summary = runner.summarize(verbose=False)
    assert summary.attempted > 0 and summary.failed == 0


def _api_section(markdown: str) -> str | None:
    """The "Python API" section of a markdown text (heading to the next heading of its level or above)."""
    m = re.search(r"^(#+)\s*Python API\s*$", markdown, re.M)
    if not m:
        return None
    end = re.search(rf"^#{{1,{len(m.group(1))}}}\s", markdown[m.end():], re.M)
    return markdown[m.start(): m.end() + (end.start() if end else len(markdown) - m.end())]


def _python_blocks(markdown: str) -> list[str]:
    return re.findall(r"^```python\n(.*?)^```", markdown, re.S | re.M)


def _python_api_sources() -> list[tuple[str, str]]:
    """(label, markdown) of README.md's Python API section (it must exist)."""
    section = _api_section((ROOT / "README.md").read_text(encoding="utf-8"))
    assert section is not None, "README.md has no 'Python API' section"
    return [("README.md#python-api", section)]


def test_readme_section_extraction():
    text = ("# tool\n```python\nskip_me()\n```\n## Python API\nintro\n```python\na = 1\n```\n"
            "### More\n```python\nb = a + 1\n```\n## Errors\n```python\nnot_this()\n```\n")
    assert _python_blocks(_api_section(text)) == ["a = 1\n", "b = a + 1\n"]
    assert _python_blocks(_api_section("intro\n## Python API\n```python\nc = 3\n```\n")) == ["c = 3\n"]  # to EOF
    assert _api_section("# tool\n## Commands\n") is None


_SOURCES = _python_api_sources()


@pytest.mark.parametrize("label, text", _SOURCES, ids=[s[0] for s in _SOURCES])
def test_python_blocks_of_the_docs_run(label, text, tmp_path, monkeypatch):
    pytest.importorskip("pandas")
    blocks = _python_blocks(text)
    assert blocks, f"no python blocks in {label}"
    monkeypatch.chdir(tmp_path)              # the examples write report folders into the working directory
    namespace: dict = {"__name__": "__docs__"}
    for k, block in enumerate(blocks):
        exec(compile(block, f"{label} block {k + 1}", "exec"), namespace)  # noqa: S102
    if label.startswith("README.md"):
        # what the text promises: six benzene rows with predicted shifts, a report folder
        assert "predicted_ppm" in namespace["df"].columns and len(namespace["df"]) == 6
        assert json.loads(Path(namespace["paths"]["results"]).read_text())["ringshift_result"] == "comparison"


def test_structure_and_peak_list_have_short_reprs():
    # the inputs print as one line too (dataclass reprs would dump coordinate arrays and every peak)
    s = ringshift.load_structure(SDF)
    text = repr(s)
    assert len(text) < 200 and "\n" not in text and "C20H20" in text and "1 conformer" in text
    peaks = ringshift.read_peaks(DEMO / "fj14c_1H.jdx", solvent="CDCl3")
    text = repr(peaks)
    assert len(text) < 200 and "\n" not in text and "solvent" in text and "points" in text
