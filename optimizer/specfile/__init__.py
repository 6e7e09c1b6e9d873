"""Read a spec file (YAML) into a :class:`~optimizer.spec.Spec`.

The file is read with PyYAML's *safe* loader only: it is composed into a node tree with
``yaml.SafeLoader`` (which keeps every node's line) and each plain value is built by
``SafeConstructor`` (strings, numbers, yes/no, null); no Python object is ever constructed.
The tree is then walked key by key (:mod:`optimizer.yamlread`) against the schema below.

Every problem becomes a :class:`~optimizer.errors.SpecError` naming the file, the 1-based line
and the dotted key path (``motor.yaml:14: requirements.cmrr_floor: cannot read '80 dBB' ...``).
The loader does not stop at the first problem: every independent problem is collected and
reported together (sorted by line); values that depend on a broken one are not checked.

Schema (format version 1; see docs/reference.md for every key, its unit and its default)::

    quartet_spec: 1
    title: ...
    amplifier:    {label, cmrr, open_loop_gain, gbw, slew_rate, offset_voltage, bias_current,
                   offset_current, voltage_noise, current_noise, input_range, output_swing}
    rails:        {positive, negative}
    signal:       {differential, common_mode, max_frequency, source_impedance, mains_derived}
    reference:    {voltage, impedance}
    requirements: {gain, gain_accuracy, cmrr_floor, cmrr_basis, yield, temperature,
                   operating_life, drift_model, min_input_impedance, output_noise}
    preferences:  {topologies, catalogs, builtin_catalogs, stock, stock_penalty, alternatives,
                   objective, cost_cap, placement_cost, line_cost, monte_carlo, same_lot_tracking,
                   resistance_range}

Modules: ``keys`` (the keys, version, plausibility ranges), ``base`` (one reader and the
shared helpers), ``circuit`` (amplifier, rails, signal, reference), ``needs`` (requirements),
``choices`` (preferences), ``schema`` (the document).
"""

from __future__ import annotations

import os

from ..errors import SpecError
from ..inputs import YamlTrouble, compose_yaml
from ..spec import Spec
from ..yamlread import Reader, Recorded, read_document
from .keys import FORMAT_VERSION, MAX_LISTED_PROBLEMS
from .schema import _Schema

__all__ = [
    "FORMAT_VERSION",
    "load_spec",
    "parse_spec_text",
]


def _combined(path: str, problems: list[SpecError]) -> SpecError:
    """One error for all problems: a single one as it is, several as one located line each."""
    ordered = sorted(problems, key=lambda p: p.line or 0)
    if len(ordered) == 1:
        return ordered[0]
    lines = [str(p) for p in ordered[:MAX_LISTED_PROBLEMS]]
    if len(ordered) > MAX_LISTED_PROBLEMS:
        lines.append(f"... and {len(ordered) - MAX_LISTED_PROBLEMS} more")
    error = SpecError(f"{len(ordered)} problems\n" + "\n".join(lines), path=path)
    error.key, error.line = ordered[0].key, ordered[0].line
    return error


def parse_spec_text(text: str, path: str) -> Spec:
    """Read a spec from YAML ``text``; ``path`` names the file in messages and is the base for
    relative catalog paths. Raises :class:`SpecError` listing every problem found."""
    try:
        root = compose_yaml(text, "a spec", 4)
    except YamlTrouble as exc:
        raise SpecError(exc.message, path=path, line=exc.line) from None
    if root is None:
        raise SpecError(
            f"the file is empty; expected a mapping starting with quartet_spec: {FORMAT_VERSION}",
            path=path,
            line=1,
        )
    reader = Reader(path)
    schema = _Schema(reader)
    try:
        spec = schema.spec(root)
    except Recorded:
        spec = None
    if reader.problems:
        raise _combined(path, reader.problems)
    assert spec is not None
    return spec


def load_spec(path: str | os.PathLike[str]) -> Spec:
    """Read and check the spec file at ``path``. Raises :class:`SpecError` (located by file, line
    and key path) for a missing or unreadable file, bad YAML, or any problem in the content."""
    name, text = read_document(path, "spec")
    return parse_spec_text(text, name)
