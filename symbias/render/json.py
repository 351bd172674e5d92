"""The machine interface: a Formula as a JSON-ready dictionary.

The fields are stable: ``quantity``, ``label``, ``unit``, ``exact`` (a string
``sympy.parse_expr`` reads back when every identifier is a plain symbol),
``numerator``, ``denominator``, ``symbols`` (sorted names), ``meanings``,
``assumptions`` and ``terms`` (numerator and denominator term counts).
With an approximation the record gains ``approx`` (sympy-parseable),
``approx_error`` (worst relative error found), ``approx_worst_point``,
``approx_points`` (corners, random draws, admitted, refinement points),
``approx_tolerance``, ``approx_assumptions`` (the magnitude statements with
their ranges), and these statements are appended to ``assumptions``.  With
sensitivities it gains ``sensitivities`` (symbol -> simplified expression as
a string, or the value where the formula is too large for a symbolic form)
and ``sensitivity_values`` (symbol -> value at ``sensitivity_point``).

Large results are written without ever holding their text:
``formula_record(..., streamed=True)`` puts :class:`StreamedText` values in
the ``exact``, ``numerator`` and ``denominator`` fields, and
:func:`write_json` writes the record to a stream chunk by chunk, byte for
byte what :func:`dumps` gives for the same record.

Examples
--------
>>> import io
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> record = formula_record(output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n"), "a"))
>>> record["exact"], record["symbols"]
('(RA)/(1)', ['RA'])
>>> out = io.StringIO()
>>> write_json(out, {"exact": StreamedText(lambda: iter(["(RA", ")/(1)"])), "terms": [1, 1]})
>>> out.getvalue() == dumps({"exact": "(RA)/(1)", "terms": [1, 1]})
True
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict
from typing import Any, Callable, Iterator, TextIO

from ..formula import Formula

__all__ = ["formula_record", "dumps", "write_json", "StreamedText", "json_safe", "derivation_record",
           "operating_point_record", "states_record", "sweep_record", "listing_record", "topology_record"]


class StreamedText:
    """A JSON string value produced chunk by chunk (a large exact result).

    Parameters
    ----------
    chunks : callable
        Returns a fresh iterator of text chunks each time it is called.
    plain : bool
        The producer guarantees that no chunk needs a JSON escape (the writer skips the check).
    """

    def __init__(self, chunks: Callable[[], Iterator[str]], plain: bool = False):
        self._chunks = chunks
        self.plain = plain

    def chunks(self) -> Iterator[str]:
        """The text, chunk by chunk."""
        return self._chunks()

    def __str__(self) -> str:
        return "".join(self._chunks())

    def __eq__(self, other: object) -> bool:
        if isinstance(other, (str, StreamedText)):
            return str(self) == str(other)
        return NotImplemented

    __hash__ = None


class _Spool:
    """Numerator and denominator text of a large formula, written once.

    The ``numerator`` and ``denominator`` fields repeat the text of ``exact``:
    the first pass writes it from the terms and keeps the chunks, later passes
    replay them (about a third of the cost of writing the terms again; the kept
    text is half the JSON's size, within the memory the output may take).
    Small formulas are just written again.
    """

    #: Terms above which a polynomial's text chunks are kept for reuse.
    SPOOL_TERMS = 50_000

    def __init__(self, formula: Formula):
        self._sources = {"numerator": formula.numerator_chunks, "denominator": formula.denominator_chunks}
        self._sizes = dict(zip(("numerator", "denominator"), formula.nterms))
        self._kept: dict[str, list[str]] = {}
        # coefficients are written with digits, "+*/()" and spaces only: the names decide
        self.plain = _plain("".join(formula.factor_texts))

    def part(self, name: str) -> Iterator[str]:
        kept = self._kept.get(name)
        if kept is not None:
            yield from kept
            return
        if self._sizes[name] <= self.SPOOL_TERMS:
            yield from self._sources[name]()
            return
        chunks: list[str] = []
        for chunk in self._sources[name]():
            chunks.append(chunk)
            yield chunk
        self._kept[name] = chunks

    def exact(self) -> Iterator[str]:
        yield "("
        yield from self.part("numerator")
        yield ")/("
        yield from self.part("denominator")
        yield ")"


def formula_record(formula: Formula, approximation: Any = None, sensitivities: Any = None,
                   point: dict[str, float] | None = None, *, streamed: bool = False) -> dict[str, Any]:
    """JSON-ready fields of a formula, its approximation and sensitivities (see the module docstring).

    With ``streamed=True`` the three exact fields are :class:`StreamedText`
    for :func:`write_json` (nothing is written out until then).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> from symbias.approx import approximate
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
    >>> r = formula_record(f, approximate(f, ["RA >> RB"]))
    >>> r["approx"], round(r["approx_error"], 3), r["approx_assumptions"]
    ('RB', 0.033, ['RA >> RB  (RA/RB in [30, 1e+04])', 'RA in [100, 100000] ohm (reference scale)'])
    """
    num_terms, den_terms = formula.nterms
    if streamed:
        spool = _Spool(formula)
        exact = StreamedText(spool.exact, spool.plain)
        numerator = StreamedText(lambda: spool.part("numerator"), spool.plain)
        denominator = StreamedText(lambda: spool.part("denominator"), spool.plain)
    else:
        exact = formula.exact_string()
        numerator, denominator = "".join(formula.numerator_chunks()), "".join(formula.denominator_chunks())
    record = {
        "quantity": formula.quantity,
        "label": formula.label,
        "unit": formula.unit,
        "exact": exact,
        "numerator": numerator,
        "denominator": denominator,
        "symbols": [s.name for s in formula.symbols],
        "meanings": {name: str(meaning) for name, meaning in formula.meanings.items()},
        "assumptions": list(formula.assumptions),
        "terms": [num_terms, den_terms],
    }
    if approximation is not None:
        statements = list(approximation.statements)
        record["approx"] = approximation.text
        record["approx_error"] = float(approximation.error)
        record["approx_tolerance"] = float(approximation.tolerance)
        record["approx_worst_point"] = dict(approximation.worst_point)
        record["approx_points"] = {"corners": approximation.corners, "random": approximation.samples,
                                   "admitted": approximation.admitted, "refinement": approximation.refined}
        record["approx_assumptions"] = statements
        record["assumptions"] = record["assumptions"] + statements
    if sensitivities is not None:
        record["sensitivities"] = {
            row.symbol: (str(row.expr) if row.expr is not None else row.value) for row in sensitivities
        }
        record["sensitivity_values"] = {row.symbol: row.value for row in sensitivities if row.value is not None}
        if point is not None:
            record["sensitivity_point"] = dict(point)
    return record


def json_safe(data: Any) -> Any:
    """Replace infinite or NaN floats by None (JSON has no infinity), recursively.

    Examples
    --------
    >>> json_safe({"ro": float("inf"), "gm": [1.0, float("nan")]})
    {'ro': None, 'gm': [1.0, None]}
    """
    if isinstance(data, float):
        return data if math.isfinite(data) else None
    if isinstance(data, dict):
        return {k: json_safe(v) for k, v in data.items()}
    if isinstance(data, (list, tuple)):
        return [json_safe(v) for v in data]
    return data


def dumps(data: Any) -> str:
    """Serialise with stable key order and two-space indentation; infinities and NaN become null.

    Examples
    --------
    >>> print(dumps({"a": float("inf")}))
    {
      "a": null
    }
    """
    return json.dumps(json_safe(data), indent=2, sort_keys=False, default=str)


def write_json(stream: TextIO, record: Any, indent: int = 2) -> None:
    """Write a record as JSON to a text stream, streaming :class:`StreamedText` values.

    The text is the same as :func:`dumps` of the record (same indentation,
    key order, escapes, ``str`` for other objects, infinities and NaN as
    null); no string value is held whole.
    """
    _write_value(stream, json_safe(record), indent, 0)


def _write_value(stream: TextIO, value: Any, indent: int, level: int) -> None:
    if isinstance(value, StreamedText):
        stream.write('"')
        for chunk in value.chunks():
            stream.write(chunk if value.plain or _plain(chunk) else json.dumps(chunk)[1:-1])
        stream.write('"')
        return
    if isinstance(value, dict) and value:
        items = [(json.dumps({key: None})[1:-7], item) for key, item in value.items()]
        _write_container(stream, "{", "}", items, indent, level)
        return
    if isinstance(value, (list, tuple)) and value:
        _write_container(stream, "[", "]", [(None, item) for item in value], indent, level)
        return
    stream.write(json.dumps(value, default=str))


#: ASCII characters JSON escapes (or that the plain test refuses): controls, quote, backslash, DEL.
_ESCAPED = bytes([*range(0x20), 0x22, 0x5C, 0x7F])


def _plain(text: str) -> bool:
    """True when JSON needs no escape in ``text`` (printable ASCII without quote or backslash).

    Checked on the bytes (``str.isprintable`` costs ten times as much on a large exact result).
    """
    if not text.isascii():
        return False
    data = text.encode("ascii")
    return len(data.translate(None, _ESCAPED)) == len(data)


def _write_container(stream: TextIO, opening: str, closing: str, items, indent: int, level: int) -> None:
    inner = "\n" + " " * (indent * (level + 1))
    stream.write(opening)
    for number, (key, item) in enumerate(items):
        stream.write(("," if number else "") + inner)
        if key is not None:
            stream.write(key + ": ")
        _write_value(stream, item, indent, level + 1)
    stream.write("\n" + " " * (indent * level) + closing)


def _transfer_error_record(error) -> dict[str, Any]:
    return {
        "kind": "small-signal: 1 - (d iout/d iin)/ideal",
        "ideal": str(error.ideal.expr),
        "exact": error.exact.exact_string(),
        "leading": error.leading.text,
        "leading_error": float(error.leading.error),
        "causes": {c.name: {"leading": c.leading.text, "leading_error": float(c.leading.error)} for c in error.causes},
    }


def derivation_record(derivation, *, streamed: bool = False) -> dict[str, Any]:
    """The JSON object of ``symbias derive``: a header and one formula record per quantity.

    With one quantity the record's fields sit beside the header; with several they are listed
    under ``results``.  ``transfer_error`` and ``at_bias`` appear when asked for.  With
    ``streamed=True`` the exact fields are :class:`StreamedText` for :func:`write_json`.
    """
    records = []
    for result in derivation.results:
        if result.formula is None:
            records.append({"quantity": result.quantity.kind, "arguments": list(result.quantity.arguments),
                            "exact": "oo", "infinite": True, "reason": result.infinite})
            continue
        record = formula_record(result.formula, result.approximation, result.sensitivities, result.sensitivity_point,
                                streamed=streamed)
        if result.transfer_error is not None:
            record["transfer_error"] = _transfer_error_record(result.transfer_error)
        if result.dc_ratio is not None:
            record["dc_ratio"] = result.dc_ratio.to_dict()
        if derivation.bias is not None:
            record["at_bias"] = result.value
            record["at_bias_kind"] = "small-signal value at the operating point"
            if result.approximation_error_at_bias is not None:
                record["approx_error_at_bias"] = result.approximation_error_at_bias
        records.append(record)
    header = {"circuit": derivation.target.title, "source": derivation.target.where}
    if derivation.bias is not None:  # where the values at the operating point came from
        header["bias_models"] = derivation.bias.inputs.models
        header["bias_corner"] = derivation.bias.inputs.corners[0] if derivation.bias.inputs.corners else None
    if derivation.bias is not None and derivation.bias.point.states is not None:
        header["operating_point_states"] = derivation.bias.point.states.to_dict()
    if len(records) == 1:
        return {**header, **records[0]}
    return {**header, "results": records}


def _units(op) -> dict[str, Any]:
    """The unit and sign of every field of an operating point record."""
    from ..conventions import SPICE_BRANCH
    from ..symbols import unit_of

    keys = sorted({k for dev in op.devices.values() for k in dev.small_signal})
    shown = {key: unit for dev in op.devices.values() for _, section, key, unit in dev.fields
             if section == "small_signal"}  # the units the tables show
    return {
        "temperature": "degC",
        "node_voltages": "V",
        "branch_currents": f"A, {SPICE_BRANCH}",
        "element_currents": "A, from the element's first node to its second",
        "output_currents": "A, positive in the direction the output transistor drives it (docs/conventions.md)",
        "devices.currents": "A, into each terminal",
        "devices.voltages": "V, between the element's own pins",
        "devices.small_signal": {k: shown.get(k) or unit_of(f"{k}_X") or "" for k in keys},
        "devices.limits": "V",
    }


def _output_currents(circuit, op) -> list[dict[str, Any]]:
    from ..conventions import output_currents

    return [{**current.to_dict(), "value": value} for current, value in output_currents(circuit, op.branch_currents)]


def operating_point_record(target, op) -> dict[str, Any]:
    """The JSON object of ``symbias bias``: the circuit, the operating point's fields, output currents, units.

    ``states`` (when a search was made) says which DC states exist, which is
    reported and whether a start-up circuit is needed.
    """
    return {"circuit": target.title, "source": target.circuit.path, **op.to_dict(),
            "output_currents": _output_currents(target.circuit, op), "units": _units(op)}


def states_record(target, found) -> dict[str, Any]:
    """The JSON object of ``symbias bias --all``: every DC state and whether start-up is needed."""
    record = {"circuit": target.title, "source": target.circuit.path, **found.to_dict()}
    for state, point_record in zip(found.states, record["states"]):
        point_record["output_currents"] = _output_currents(target.circuit, state.point)
    if found.states:
        record["units"] = _units(found.states[0].point)
    return record


def sweep_record(target, result) -> dict[str, Any]:
    """The JSON object of ``symbias sweep``: output, kind, metrics with their units, branch, the swept data.

    ``output_meaning`` says which way the output counts; ``metric_units`` gives
    each metric's unit; ``branch`` the DC states at the nominal point and the
    swept ranges off the conducting state (``lost``).
    """
    from ..conventions import SPICE_BRANCH

    return {"circuit": target.title, "source": target.circuit.path, "output": result.output, "kind": result.kind,
            "output_unit": result.output_unit, "output_meaning": result.output_meaning,
            "swept_unit": result.swept_unit, "metrics": result.metrics.to_dict(), "metric_units": result.units(),
            "branch": result.branch.to_dict(), "branch_currents_sign": SPICE_BRANCH,
            **result.sweep.to_dict((result.output,))}


def listing_record(row) -> dict[str, Any]:
    """One topology of ``symbias list --json``."""
    t = row.topology
    return {
        "id": t.id,
        "title": t.title,
        "family": t.family,
        "technology": t.technology,
        "devices": row.devices,
        "headroom": dict(t.headroom),
        "rout": row.rout,
        "roles": {k: list(v) if isinstance(v, tuple) else v for k, v in t.roles.items()},
        "path": t.path,
    }


def topology_record(description) -> dict[str, Any]:
    """The JSON object of ``symbias show``: the library fields and ``derived`` (one record per quantity).

    Each derived record holds the formula fields, ``role`` (``rout`` or ``transfer``), ``options`` and
    ``leading_order`` (``expr``, ``error``, ``assumptions``; null when not shorter than the exact form).
    """
    topology = description.topology
    record = topology.to_dict()
    record["derived"] = []
    if description.derivation is None:
        return record
    options = asdict(topology.small_signal_options())
    options = {k: list(v) if isinstance(v, tuple) else v for k, v in options.items()}
    for index, (result, leading) in enumerate(zip(description.derivation.results, description.leading)):
        lead = None if leading is None else {"expr": str(leading.expr), "error": float(leading.error),
                                             "assumptions": list(leading.statements)}
        fields = formula_record(result.formula) if result.formula is not None else {
            "quantity": result.quantity.kind, "exact": "oo", "infinite": True, "reason": result.infinite}
        record["derived"].append({"role": "rout" if index == 0 else "transfer", **fields, "options": options,
                                  "leading_order": lead})
    return record
