"""How results look in a notebook: a one-line ``repr``, an HTML table and pandas DataFrames.

The mixins here give the result records (:class:`~ringshift.shifts.records.Prediction`,
:class:`~ringshift.comparison.run.CompareResult`, :class:`~ringshift.runners.trajectory.TrajectoryPrediction`)

* ``repr(result)``: one line, well under 200 characters, naming the molecule, its circuits and currents;
* ``result._repr_html_()``: compact HTML tables that Jupyter shows for a result at the end of a cell;
* ``result.to_frame(table=...)``: a :class:`pandas.DataFrame` (pandas is the optional extra
  ``ringshift[frames]``).

Tables and frames are built from the JSON dictionaries of :mod:`ringshift.reporting.json`
(``prediction_to_dict``, ``comparison_to_dict``, ``trajectory_to_dict``), so a frame, the HTML table,
``results.json`` and ``--format json`` hold the same (rounded) numbers under the same field names.
A field whose value is a dict (``ring_current_by_circuit_ppm``) becomes one column per key,
named ``field.key`` (``ring_current_by_circuit_ppm.R1``), as :func:`pandas.json_normalize` names them.

``@dataclass`` writes a field-by-field ``__repr__`` into every class that does not define one itself;
:meth:`_Display.__init_subclass__` puts the short one into each subclass first, so the record classes
only need the mixin in their class line.

This module imports nothing heavy at import time (records import it); the JSON functions, RDKit and
pandas are imported when a method runs.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable, Sequence
from typing import Any, ClassVar

from ringshift._numbers import text

__all__ = ["PredictionDisplay", "ComparisonDisplay", "TrajectoryDisplay", "records_frame", "PANDAS_HINT"]

#: The one-line message of the ImportError raised by ``to_frame()`` without pandas.
PANDAS_HINT = "to_frame() needs pandas, which is not installed: pip install 'ringshift[frames]' (or pip install pandas)"

#: Rows shown per HTML table before the rest is summarised as "... n more".
HTML_MAX_ROWS = 40

#: Names longer than this are shortened in a repr.
_NAME_CHARS = 28

#: Circuits listed by name in a repr before the rest is counted.
_REPR_CIRCUITS = 3


# ------------------------------------------------------------------------------------------ frames
def _pandas():
    try:
        import pandas
    except ImportError:
        raise ImportError(PANDAS_HINT) from None
    return pandas


def _flatten(row: dict, prefix: str = "") -> dict:
    """A JSON record with dict values spread into ``parent.key`` entries (lists are kept whole)."""
    out: dict = {}
    for key, value in row.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            out.update(_flatten(value, f"{name}."))
        else:
            out[name] = value
    return out


def records_frame(rows: Sequence[dict]):
    """A DataFrame with one row per JSON record; dict fields flattened to ``field.key`` columns.

    Column order is the order of the JSON fields (first record first, keys new in later records
    appended); a record without a key has None there.
    """
    pd = _pandas()
    flat = [_flatten(r) for r in rows]
    columns: dict[str, None] = {}
    for r in flat:
        columns.update(dict.fromkeys(r))
    return pd.DataFrame([[r.get(c) for c in columns] for r in flat], columns=list(columns))


def _table_rows(data: dict, table: str, tables: dict[str, Callable[[dict], list[dict]]], kind: str) -> list[dict]:
    from ringshift.errors import InputError

    if table not in tables:
        raise InputError(f"unknown table {table!r} for a {kind}; expected one of {', '.join(map(repr, tables))}",
                         "table")
    return tables[table](data)


# -------------------------------------------------------------------------------------------- HTML
def _cell(value: Any, digits: int = 2) -> str:
    if value is None:
        return "–"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return text(value, f".{digits}f")
    if isinstance(value, (list, tuple)):
        return " ".join(str(v) for v in value)
    return str(value)


def _signed(value: float | None, digits: int = 2) -> str:
    return "–" if value is None else text(value, f"+.{digits}f")


def _html_table(caption: str, header: Sequence[str], rows: Iterable[Sequence[Any]]) -> str:
    rows = list(rows)
    shown = rows[:HTML_MAX_ROWS]
    import html  # loaded by the notebook views only (start-up)

    esc = html.escape
    parts = [f"<table><caption style='text-align:left;font-weight:bold'>{esc(caption)}</caption>",
             "<thead><tr>" + "".join(f"<th>{esc(h)}</th>" for h in header) + "</tr></thead><tbody>"]
    for r in shown:
        parts.append("<tr>" + "".join(f"<td>{esc(_cell(v))}</td>" for v in r) + "</tr>")
    if len(rows) > len(shown):
        parts.append(f"<tr><td colspan='{len(header)}'>… {len(rows) - len(shown)} more "
                     f"(all rows: to_frame())</td></tr>")
    parts.append("</tbody></table>")
    return "".join(parts)


def _html_block(title: str, tables: Sequence[str], notes: Sequence[str] = ()) -> str:
    import html

    body = [f"<div class='ringshift-result'><p><code>{html.escape(title)}</code></p>", *tables]
    if notes:
        body.append("<ul>" + "".join(f"<li>{html.escape(n)}</li>" for n in notes) + "</ul>")
    body.append("</div>")
    return "\n".join(body)


# ------------------------------------------------------------------------------------------- repr
def _short(text: str, n: int = _NAME_CHARS) -> str:
    text = " ".join(str(text).split())
    return text if len(text) <= n else text[: n - 1] + "…"


def _plural(n: int, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"


def _formula(mol) -> str:
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    return _short(CalcMolFormula(mol), 24)


def _circuit_list(items: Sequence[str], unit: str = " nA/T") -> str:
    shown = list(items[:_REPR_CIRCUITS])
    more = len(items) - len(shown)
    text = ", ".join(shown) + unit
    return text + (f", +{more} more" if more else "")


def _circuits_text(n: int, items: Sequence[str]) -> str:
    return _plural(n, "circuit") + (f" ({_circuit_list(items)})" if items else "")


class _Display:
    """Base of the display mixins: the short repr goes into every subclass (see the module notes)."""

    _kind: ClassVar[str] = "result"
    _tables: ClassVar[dict[str, Callable[[dict], list[dict]]]] = {}

    def __init_subclass__(cls, **kwargs):
        super().__init_subclass__(**kwargs)
        if "__repr__" not in cls.__dict__:
            cls.__repr__ = _Display.__repr__  # type: ignore[method-assign]

    # subclasses provide these three
    def _summary(self) -> str:
        raise NotImplementedError

    def _as_dict(self) -> dict:
        raise NotImplementedError

    def _html_tables(self, data: dict) -> list[str]:
        raise NotImplementedError

    def __repr__(self) -> str:
        return f"<{type(self).__name__} {self._summary()}>"

    def _repr_html_(self) -> str:
        data = self._as_dict()
        nested = data.get("prediction") or {}
        notes = [*(data.get("warnings") or []), *(nested.get("warnings") or []), *(data.get("peak_warnings") or [])]
        return _html_block(repr(self), self._html_tables(data), notes)

    def to_frame(self, table: str | None = None):
        """A :class:`pandas.DataFrame` of one of the result's tables (see the class's ``_tables``).

        Columns are the JSON field names of :mod:`ringshift.reporting.json`; dict fields are spread
        into ``field.key`` columns. Needs pandas (``pip install 'ringshift[frames]'``).
        """
        _pandas()  # say what is missing before any work
        name = next(iter(self._tables)) if table is None else table
        return records_frame(_table_rows(self._as_dict(), name, self._tables, self._kind))


# -------------------------------------------------------------------------------------- prediction
def _current_text(label: str, electrons: int | None, current: float | None) -> str:
    pi = f" {electrons}π" if electrons is not None else ""
    cur = "no current" if current is None else f"{current:+.1f}"
    return f"{label}{pi} {cur}"


class PredictionDisplay(_Display):
    """Display of a :class:`~ringshift.shifts.records.Prediction`.

    ``to_frame()`` / ``to_frame("protons")``: one row per hydrogen (``index``, ``parent``, ``group``,
    ``ring_current_ppm``, ``ring_current_by_circuit_ppm.<circuit>``, ``conformer_spread_ppm``,
    ``charge_ppm``, ``proton_class``, ``reference_ppm``, ``predicted_ppm``); ``to_frame("groups")``:
    one row per group of equivalent hydrogens; ``to_frame("circuits")``: one row per circuit.
    """

    _kind = "prediction"
    _tables = {"protons": lambda d: d["protons"], "groups": lambda d: d["groups"],
               "circuits": lambda d: d["circuits"]}

    def _as_dict(self) -> dict:
        from ringshift.reporting.json import prediction_to_dict

        return prediction_to_dict(self)

    def _summary(self) -> str:
        r: Any = self
        s, circuits = r.structure, r.circuits
        formula = _formula(s.mol)
        name = _short(s.name)
        head = formula if name == formula else f"{name} {formula}"
        items = [_current_text(c.circuit.label, c.pi_electrons, c.current_nA_per_T) for c in circuits]
        parts = [_circuits_text(len(circuits), items), f"{len(r.protons)} H in {_plural(len(r.groups), 'group')}",
                 f"model {r.model}", _plural(int(s.coords.shape[0]), "conformer")]
        if r.warnings:
            parts.append(_plural(len(r.warnings), "warning"))
        return f"{head}: " + ", ".join(parts)

    def _html_tables(self, data: dict) -> list[str]:
        circ = _html_table(
            "Circuits (current J > 0 diatropic)",
            ["circuit", "kind", "size", "π e", "class", "J (nA/T)", "× benzene", "planar", "current source"],
            [[c["label"], c["kind"], c["size"], c["pi_electrons"], c["huckel_class"], _signed(c["current_nA_per_T"], 1),
              _signed(c["current_rel_benzene"]), c["planar"], c["current_source"]] for c in data["circuits"]])
        groups = _html_table(
            "Proton groups (ppm; ring current > 0 is downfield)",
            ["group", "nH", "H atoms", "class", "reference", "ring current", "charge", "predicted"],
            [[g["label"], g["n_h"], g["atoms"], g["proton_class"], g["reference_ppm"], _signed(g["ring_current_ppm"]),
              _signed(g["charge_ppm"]), g["predicted_ppm"]] for g in data["groups"]])
        return [circ, groups]


# -------------------------------------------------------------------------------------- comparison
def _peak_rows(data: dict) -> list[dict]:
    """One row per peak: its JSON fields, then ``assignment.<field>`` of the group it holds.

    A peak holding k > 1 groups gives k rows (its own fields repeated); a peak holding none gives
    one row with None in the ``assignment.*`` columns.
    """
    by_index = {a["index"]: a for a in data["assignment"]}
    rows = []
    for peak in data["peaks"]:
        held = [by_index[g] for g in peak["groups"] if g in by_index] or [None]
        for a in held:
            rows.append({**peak, "assignment": {k: (None if a is None else a[k]) for k in _assignment_keys(data)}})
    return rows


def _assignment_keys(data: dict) -> list[str]:
    keys: dict[str, None] = {}
    for a in data["assignment"]:
        keys.update(dict.fromkeys(a))
    return list(keys)


class ComparisonDisplay(_Display):
    """Display of a :class:`~ringshift.comparison.run.CompareResult`.

    ``to_frame()`` / ``to_frame("peaks")``: one row per observed peak (``index``, ``label``, ``shift_ppm``,
    ``integral``, ``kind``, ``slots``, ``groups``, ``assigned_h``) joined with the assignment of the group
    it holds as ``assignment.<field>`` (``assignment.label``, ``assignment.predicted_ppm``,
    ``assignment.residual_ppm``, ...); a peak holding several groups repeats once per group.
    ``to_frame("assignment")``: one row per proton group; ``to_frame("circuits")``: one row per fitted
    circuit (``evidence.<field>`` columns).
    """

    _kind = "comparison"
    _tables = {"peaks": _peak_rows, "assignment": lambda d: d["assignment"], "circuits": lambda d: d["circuits"]}

    def _as_dict(self) -> dict:
        from ringshift.reporting.json import comparison_to_dict

        r: Any = self
        return comparison_to_dict(r)

    def _summary(self) -> str:
        r: Any = self
        comp, pred = r.comparison, r.prediction
        source = os.path.basename(str(r.peaks.source)) or str(r.peaks.source)
        fit = next((c for c in comp.circuits if c.label == comp.verdict_circuit), None)
        if comp.verdict_basis == "combined" and comp.combined is not None:
            fit = comp.combined
            why = f" (combined {fit.current_nA_per_T:+.1f} ± {fit.stderr_nA_per_T:.1f} nA/T)"
        else:
            why = "" if fit is None else (f" ({fit.label} {fit.current_nA_per_T:+.1f} ± "
                                          f"{fit.stderr_nA_per_T:.1f} nA/T)")
        n_groups = len(comp.assignment)
        assigned = n_groups - len(comp.unassigned_groups)
        samples = sum(1 for p in comp.peaks if p.kind == "sample")
        parts = [f"{comp.verdict}{why}", f"{assigned}/{n_groups} groups on {_plural(samples, 'sample peak')}"]
        if comp.unassigned_peaks:
            parts.append(f"{len(comp.unassigned_peaks)} unassigned")
        if comp.claim is not None:
            parts.append(f"claim '{comp.claim.claim}' {comp.claim.outcome}")
        return f"{_short(pred.structure.name, 20)} vs {_short(source, 24)}: " + ", ".join(parts)

    def _html_tables(self, data: dict) -> list[str]:
        import html

        comb = data.get("combined")
        source = ("the combined current" if data.get("verdict_basis") == "combined"
                  else f"circuit {data['verdict_circuit']}")
        rows = [[c["label"], c["verdict"] if c.get("identified", True) else f"{c['verdict']} (split not identified)",
                 _signed(c["current_nA_per_T"], 1) if c.get("identified", True) else "–",
                 f"{c['stderr_nA_per_T']:.1f}" if c.get("identified", True) else "–",
                 f"{c['ci95_nA_per_T'][0]:+.1f} … {c['ci95_nA_per_T'][1]:+.1f}", _signed(c["current_rel_benzene"]),
                 _signed(c["prior_nA_per_T"], 1), _lead(c["evidence"])] for c in data["circuits"]]
        if comb:
            rows.append([f"combined ({comb['lead_circuit']})", comb["verdict"], _signed(comb["current_nA_per_T"], 1),
                         f"{comb['stderr_nA_per_T']:.1f}",
                         f"{comb['ci95_nA_per_T'][0]:+.1f} … {comb['ci95_nA_per_T'][1]:+.1f}",
                         _signed(comb["current_rel_benzene"]), _signed(comb["prior_nA_per_T"], 1),
                         _lead(comb["evidence"])])
        circ = _html_table(
            f"Fitted currents (verdict {data['verdict']}, from {source}; evidence as log10 Bayes factors)",
            ["circuit", "verdict", "J (nA/T)", "± sd", "95% interval", "× benzene", "a priori", "evidence"], rows)
        assign = _html_table(
            "Assignment (ppm)",
            ["group", "nH", "class", "peak", "observed", "predicted", "residual", "ring current"],
            [[a["label"], a["n_h"], a["proton_class"], a["peak_label"], a["observed_ppm"], a["predicted_ppm"],
              _signed(a["residual_ppm"]), _signed(a["ring_current_ppm"])] for a in data["assignment"]])
        out = [circ, assign]
        claim = data.get("claim")
        if claim:
            out.insert(0, f"<p>{html.escape(claim['reason'])}</p>")
        if data["unassigned_peaks"]:
            listed = ", ".join(f"{p['label']} ({p['shift_ppm']:.2f} ppm)" for p in data["unassigned_peaks"])
            out.append(f"<p>Unassigned peaks: {html.escape(listed)}</p>")
        return out


def _lead(ev: dict) -> str:
    return f"{ev['best']} over {ev['runner_up']}: log10 B {ev.get('log10_bf_margin', 0.0):.2f}, {ev['kass_raftery']}"


# -------------------------------------------------------------------------------------- trajectory
class TrajectoryDisplay(_Display):
    """Display of a :class:`~ringshift.runners.trajectory.TrajectoryPrediction`.

    ``to_frame()`` / ``to_frame("protons")``: one row per hydrogen (fields of ``trajectory_to_dict``);
    ``to_frame("groups")`` and ``to_frame("circuits")`` likewise.
    """

    _kind = "trajectory prediction"
    _tables = {"protons": lambda d: d["protons"], "groups": lambda d: d["groups"],
               "circuits": lambda d: d["circuits"]}

    def _as_dict(self) -> dict:
        from ringshift.reporting.json import trajectory_to_dict

        r: Any = self
        return trajectory_to_dict(r)

    def _summary(self) -> str:
        r: Any = self
        s, circuits = r.template.structure, r.circuits
        items = [f"{c.label} {text(c.current_nA_per_T, '+.1f')}" for c in circuits]
        parts = [_plural(r.n_frames, "frame"), _circuits_text(len(circuits), items),
                 f"{len(r.h_indices)} H in {_plural(len(r.groups), 'group')}", f"model {r.model}"]
        if r.warnings:
            parts.append(_plural(len(r.warnings), "warning"))
        return f"{_short(s.name)} {_formula(s.mol)}: " + ", ".join(parts)

    def _html_tables(self, data: dict) -> list[str]:
        circ = _html_table(
            "Circuits (frame-weighted mean ± sd)",
            ["circuit", "J (nA/T)", "sd", "radius (Å)", "planar fraction"],
            [[c["label"], _signed(c["current_nA_per_T"], 1), c["current_sd_nA_per_T"], c["radius_A"],
              c["planar_fraction"]] for c in data["circuits"]])
        groups = _html_table(
            "Proton groups (ppm)", ["group", "nH", "H atoms", "ring current", "spread", "predicted"],
            [[g["label"], g["n_h"], g["atoms"], _signed(g["ring_current_ppm"]), g["spread_ppm"], g["predicted_ppm"]]
             for g in data["groups"]])
        return [circ, groups]
