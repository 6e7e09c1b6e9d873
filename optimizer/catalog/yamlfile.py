"""YAML catalog files: ``discrete:`` and ``networks:`` lists."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Final

import numpy as np
import yaml

from ..errors import CatalogError, ModelError, UnitError
from ..parts import NetworkPart
from ..units import (
    parse_resistance,
)
from .cells import (
    _QUANTITIES,
    _combined,
    _did_you_mean,
    _discrete_from_table,
    _Problem,
    _ProblemList,
    _Problems,
    _read_ids,
    _read_quantity,
    _read_sizes,
    _read_stock,
    _Table,
)
from .series import FloatArray, IntArray
from .table import (
    _NULL_TAG,
    CSV_OPTIONAL,
    CSV_REQUIRED,
    NETWORK_OPTIONAL,
    NETWORK_REQUIRED,
    empty_discrete_frame,
)

if TYPE_CHECKING:  # pandas is imported where a table is built (it takes a third of a second)
    import pandas as pd


def _scalar_text(node: yaml.Node) -> str | None:
    """The raw text of a scalar node as written (``0603`` stays ``0603``); None for null."""
    if node.tag == _NULL_TAG:
        return None
    return str(node.value)


def _yaml_entry(
    path: str, item: yaml.Node, section: str, required: Sequence[str], known: Sequence[str]
) -> dict[str, tuple[object, int]]:
    """The raw cells of one entry of a ``section:`` list with the line of each; the first
    problem of the entry raises :class:`CatalogError`."""
    if not isinstance(item, yaml.MappingNode):
        raise CatalogError(
            f"expected a mapping of {', '.join(required)} for each entry of {section}:",
            path=path,
            row=item.start_mark.line + 1,
            column=section,
        )
    found: dict[str, tuple[object, int]] = {}
    for key_node, value_node in item.value:
        key = str(key_node.value)
        key_line = key_node.start_mark.line + 1
        if key in found:
            raise CatalogError(
                "the key appears twice in this entry", path=path, row=key_line, column=key
            )
        if key not in known:
            message = _did_you_mean(key, known, "key")
            raise CatalogError(message, path=path, row=key_line, column=key)
        if key == "values":
            if not isinstance(value_node, yaml.SequenceNode):
                raise CatalogError(
                    "expected a list of element values such as [1k, 10k, 1k, 10k]",
                    path=path,
                    row=key_line,
                    column=key,
                )
            values: list[tuple[str | None, int]] = []
            for element in value_node.value:
                if not isinstance(element, yaml.ScalarNode):
                    raise CatalogError(
                        "expected a single resistance for each element",
                        path=path,
                        row=element.start_mark.line + 1,
                        column=key,
                    )
                values.append((_scalar_text(element), element.start_mark.line + 1))
            found[key] = (values, key_line)
        elif isinstance(value_node, yaml.ScalarNode):
            found[key] = (_scalar_text(value_node), key_line)
        else:
            raise CatalogError(
                "expected a single value, not a list or mapping",
                path=path,
                row=key_line,
                column=key,
            )
    return found


def _yaml_rows(
    path: str, node: yaml.Node, section: str, required: Sequence[str], optional: Sequence[str]
) -> tuple[list[int], dict[str, list[object]], dict[str, list[int]], list[CatalogError]]:
    """Read a list of mappings into columns of raw values with the line of each cell, and the
    problems of the entries left out (each entry's first problem; the other entries are read
    on, so one run reports them all)."""
    if not isinstance(node, yaml.SequenceNode):
        raise CatalogError(
            f"expected a list of parts under {section}:",
            path=path,
            row=node.start_mark.line + 1,
            column=section,
        )
    known = (*required, *optional)
    rows: list[int] = []
    cells: dict[str, list[object]] = {k: [] for k in known}
    lines: dict[str, list[int]] = {k: [] for k in known}
    problems: list[CatalogError] = []
    for item in node.value:
        line = item.start_mark.line + 1
        try:
            found = _yaml_entry(path, item, section, required, known)
        except CatalogError as exc:
            problems.append(exc)
            continue
        for key in known:
            value, key_line = found.get(key, (None, line))
            cells[key].append(value)
            lines[key].append(key_line)
        rows.append(line)
    if not rows and not problems:
        raise CatalogError(
            f"the {section}: list is empty", path=path, row=node.start_mark.line + 1, column=section
        )
    return rows, cells, lines, problems


def _yaml_table(
    path: str, node: yaml.Node, section: str, required: Sequence[str], optional: Sequence[str]
) -> tuple[_Table, list[CatalogError]]:
    """The cells of a ``section:`` list as a table, and the problems of the entries left
    out."""
    import pandas as pd

    rows, cells, lines, problems = _yaml_rows(path, node, section, required, optional)
    table = _Table(
        path,
        {k: pd.Series(v, dtype=object) for k, v in cells.items()},
        np.array(rows, dtype=np.int64),
        {k: np.array(v, dtype=np.int64) for k, v in lines.items()},
    )
    return table, problems


def _networks_from_table(table: _Table) -> tuple[NetworkPart, ...]:
    """Validate every network entry (column by column, as for discrete parts) and build them."""
    problems = _ProblemList(table)
    problem: _Problems
    order = {name: i for i, name in enumerate((*NETWORK_REQUIRED, *NETWORK_OPTIONAL))}
    ids, problem = _read_ids(table)
    problems.add("part_id", problem, order["part_id"])
    numbers: dict[str, FloatArray] = {}
    for column in (
        "tolerance",
        "ratio_tolerance",
        "tempco",
        "tracking",
        "power",
        "max_voltage",
        "cost",
    ):
        numbers[column], problem = _read_quantity(table, column, _QUANTITIES[column], None)
        problems.add(column, problem, order[column])
    for column in ("drift", "ratio_drift"):
        numbers[column], problem = _read_quantity(table, column, _QUANTITIES[column], 0.0)
        problems.add(column, problem, order[column])
    stock, problem = _read_stock(table)
    problems.add("stock", problem, order["stock"])
    packages, problem = _read_sizes(table, "package", default="network")
    problems.add("package", problem, order["package"])
    values: list[tuple[float, ...]] = []
    for row, cell in enumerate(table.columns["values"]):
        problem = None
        if not cell:
            problem = _Problem(
                row, "no value: expected a list of 2 or 4 element values such as [1k, 10k, 1k, 10k]"
            )
        elif len(cell) not in (2, 4):
            problem = _Problem(
                row, f"found {len(cell)} element values: expected 2 (a dual) or 4 (a quad)"
            )
        else:
            elements: list[float] = []
            for text, line in cell:
                try:
                    elements.append(parse_resistance("" if text is None else text))
                except UnitError as exc:
                    problem = _Problem(row, str(exc), line)
                    break
            values.append(tuple(elements))
        if problem is not None:
            problems.add("values", problem, order["values"])
            break
    problems.raise_first()
    parts: list[NetworkPart] = []
    for row in range(len(ids)):
        try:
            parts.append(
                NetworkPart(
                    part_id=str(ids[row]),
                    values_ohm=values[row],
                    abs_tolerance=float(numbers["tolerance"][row]),
                    ratio_tolerance=float(numbers["ratio_tolerance"][row]),
                    abs_tempco_per_k=float(numbers["tempco"][row]),
                    tracking_tempco_per_k=float(numbers["tracking"][row]),
                    power_per_element_w=float(numbers["power"][row]),
                    max_voltage_v=float(numbers["max_voltage"][row]),
                    unit_cost=float(numbers["cost"][row]),
                    stock_qty=int(stock[row]),
                    size=str(packages[row]),
                    drift_1000h=float(numbers["drift"][row]),
                    ratio_drift_1000h=float(numbers["ratio_drift"][row]),
                )
            )
        except ModelError as exc:  # pragma: no cover - the column checks mirror the model's
            raise CatalogError(
                f"{exc.field}: {exc.message}", path=table.path, row=int(table.row_lines[row])
            ) from None
    return tuple(parts)


_YAML_SECTIONS: Final = ("discrete", "networks")


def _yaml_sections(path: str, data: bytes) -> dict[str, yaml.Node]:
    """The top-level lists of a YAML catalog (``discrete``, ``networks``) by key; a located
    :class:`CatalogError` when the text, the YAML or the top level is wrong."""
    from ..inputs import YamlTrouble, compose_yaml

    try:
        text = data.decode("utf-16" if data[:2] in (b"\xff\xfe", b"\xfe\xff") else "utf-8-sig")
    except UnicodeDecodeError as exc:
        raise CatalogError(
            f"cannot read the file as UTF-8 text ({exc.reason} at byte {exc.start})", path=path
        ) from None
    try:
        root = compose_yaml(text, "a catalog", 3)
    except YamlTrouble as exc:
        raise CatalogError(exc.message, path=path, row=exc.line) from None
    expected = "a mapping with a discrete: list and/or a networks: list"
    if root is None:
        raise CatalogError(f"the file is empty: expected {expected}", path=path)
    if not isinstance(root, yaml.MappingNode):
        raise CatalogError(f"expected {expected}", path=path, row=root.start_mark.line + 1)
    sections: dict[str, yaml.Node] = {}
    for key_node, value_node in root.value:
        key = str(key_node.value)
        if key not in _YAML_SECTIONS:
            raise CatalogError(
                _did_you_mean(key, _YAML_SECTIONS, "key"),
                path=path,
                row=key_node.start_mark.line + 1,
                column=key,
            )
        if key in sections:
            raise CatalogError(
                "the key appears twice", path=path, row=key_node.start_mark.line + 1, column=key
            )
        sections[key] = value_node
    if not sections:
        raise CatalogError(f"the file is empty: expected {expected}", path=path)
    return sections


def _load_yaml(
    path: str, data: bytes
) -> tuple[pd.DataFrame, IntArray, tuple[NetworkPart, ...], IntArray]:
    sections = _yaml_sections(path, data)
    problems: list[CatalogError] = []  # every problem of both lists, reported together

    def checked(section: str, required: Sequence[str], optional: Sequence[str]) -> _Table | None:
        """The table of one list with its structural problems recorded; None when the list
        is absent or every entry was left out."""
        if section not in sections:
            return None
        table, skipped = _yaml_table(path, sections[section], section, required, optional)
        problems.extend(skipped)
        return table if len(table.row_lines) else None

    discrete, discrete_lines = empty_discrete_frame(), np.zeros(0, dtype=np.int64)
    networks: tuple[NetworkPart, ...] = ()
    network_lines = np.zeros(0, dtype=np.int64)
    discrete_table = checked("discrete", CSV_REQUIRED, CSV_OPTIONAL)
    network_table = checked("networks", NETWORK_REQUIRED, NETWORK_OPTIONAL)
    try:
        if discrete_table is not None:
            discrete, discrete_lines = (
                _discrete_from_table(discrete_table),
                discrete_table.row_lines,
            )
    except CatalogError as exc:
        problems.extend(exc.problems)
    try:
        if network_table is not None:
            networks, network_lines = _networks_from_table(network_table), network_table.row_lines
    except CatalogError as exc:
        problems.extend(exc.problems)
    if problems:
        raise _combined(path, problems)
    return discrete, discrete_lines, networks, network_lines
