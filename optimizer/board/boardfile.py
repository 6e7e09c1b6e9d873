"""Read a board file (YAML) into a :class:`~optimizer.board.model.Board`.

It uses the spec reader's machinery (``optimizer.specfile``: PyYAML's safe loader only, every
problem located by file, line and key path, all independent problems reported together), and
each amplifier's spec is either a spec file (read by :func:`optimizer.specfile.load_spec`,
its problems located in that file) or a spec written inline, read by
the spec reader with its keys named below the board's
(``amplifiers[2].spec.requirements.gain``).

Format version 1 (keys of our own)::

    quartet_board: 1
    title: text                                   (optional)
    amplifiers:                                   a list; each item:
      - name: text                                unique on the board
        spec: FILE.yaml | {a spec mapping}        a path relative to the board file, or inline
        quantity: 3                               channels built alike (default 1)
        designator: PH                            prefix of the reference designators
                                                  (optional; default A, B, C, ...)
    purchasing:                                   (optional) one set for the whole board
      catalogs: [FILE, ...]                       relative to the board file
      builtin_catalogs: true
      stock: any | only | prefer
      stock_penalty: 0.5                          required with stock: prefer
      line_cost: 1                                per distinct part id on the board
      placement_cost: 0.02                        per placement (part or network package)
      max_lines: 6                                optional cap on distinct part ids
      alternatives: 3                             boards to rank

An amplifier's own ``preferences`` keep their topologies, resistance range and Monte-Carlo
settings; catalogs, stock policy, costs and the objective are the board's (``purchasing``).
"""

from __future__ import annotations

import os
import re
import string
from collections.abc import Callable
from pathlib import Path

from yaml.nodes import MappingNode, Node

from ..errors import ModelError, SpecError, quote
from ..inputs import YamlTrouble, compose_yaml, is_file
from ..spec import Spec, StockPolicy
from ..specfile import _combined, load_spec
from ..specfile.schema import _Schema
from ..yamlread import Reader, Recorded, Section, node_line, read_document
from .model import Board, BoardAmplifier, Purchasing

__all__ = ["BOARD_FORMAT_VERSION", "load_board", "parse_board_text"]

#: The board-file format version this module reads (the ``quartet_board`` key).
BOARD_FORMAT_VERSION = 1
#: Most amplifier kinds and channels on one board.
MAX_KINDS = 32
MAX_QUANTITY = 1000
#: A designator prefix: a letter, then letters, digits or ``_``, not ending in a digit (the
#: channel number follows it); at most 12 characters.
PREFIX_PATTERN = re.compile(r"[A-Za-z](?:[A-Za-z0-9_]{0,10}[A-Za-z_])?")

TOP_KEYS = ("quartet_board", "title", "amplifiers", "purchasing")
AMPLIFIER_KEYS = ("name", "spec", "quantity", "designator")
PURCHASING_KEYS = (
    "catalogs",
    "builtin_catalogs",
    "stock",
    "stock_penalty",
    "line_cost",
    "placement_cost",
    "max_lines",
    "alternatives",
)


def default_prefix(index: int) -> str:
    """A, B, ..., Z, AA, AB, ... for the amplifier kind at 0-based ``index``."""
    letters = string.ascii_uppercase
    text = ""
    index += 1
    while index:
        index, rest = divmod(index - 1, 26)
        text = letters[rest] + text
    return text


class _BoardReader:
    def __init__(self, path: str) -> None:
        self.r = Reader(path)
        self.schema = _Schema(self.r)
        self.foreign: list[SpecError] = []  # problems located in the spec files named

    def bounded(self, low: int, high: int | None) -> Callable[[Node, str], int]:
        """A reader of a whole number from ``low`` to ``high`` (None: no upper end)."""
        expected = (
            f"a whole number of {low} or more"
            if high is None
            else f"a whole number from {low} to {high}"
        )
        read = self.r.integer(expected)

        def inner(node: Node, key: str) -> int:
            value = read(node, key)
            if value < low or (high is not None and value > high):
                self.r.fail(key, node_line(node), f"expected {expected}, got {value}")
            return value

        return inner

    def version(self, node: Node, key: str) -> int:
        expected = f"the board format version, {BOARD_FORMAT_VERSION}"
        version = self.r.integer(expected)(node, key)
        if version != BOARD_FORMAT_VERSION:
            self.r.fail(
                key,
                node_line(node),
                f"unsupported format version {version}; this Quartet reads board format "
                f"{BOARD_FORMAT_VERSION}",
            )
        return version

    def spec_file(self, node: Node, key: str) -> Spec:
        text = self.r.text(node, key)
        candidate = Path(os.path.expanduser(text))
        if not candidate.is_absolute():
            candidate = self.r.folder / candidate
        if not is_file(candidate):
            message = f"spec file {quote(text)} not found (looked for {quote(str(candidate))})"
            self.r.fail(key, node_line(node), message)
        try:
            return load_spec(candidate)
        except SpecError as exc:
            self.foreign.append(exc)
            self.r.bad.add(key)
            raise Recorded from None

    def spec(self, node: Node, key: str) -> Spec:
        if not isinstance(node, MappingNode):
            return self.spec_file(node, key)
        # An inline spec: the spec reader itself, naming its keys below this one.
        inner = Reader(self.r.path, key)
        try:
            spec = _Schema(inner).spec(node)
        except Recorded:
            spec = None
        self.r.problems.extend(inner.problems)
        self.r.warnings.extend(inner.warnings)
        if spec is None or inner.problems:
            self.r.bad.add(key)
            raise Recorded
        return spec

    def amplifiers(self, node: Node, key: str) -> tuple[BoardAmplifier, ...]:
        r = self.r
        items = r.sequence(node, key, "amplifiers (mappings with name, spec, quantity)")
        if not items:
            r.fail(key, node_line(node), "expected at least one amplifier")
        if len(items) > MAX_KINDS:
            r.fail(
                key, node_line(node), f"expected at most {MAX_KINDS} amplifiers, got {len(items)}"
            )
        out: list[BoardAmplifier] = []
        names: dict[str, str] = {}
        prefixes: dict[str, str] = {}
        for index, item in enumerate(items):
            item_key = f"{key}[{index}]"
            try:
                m = r.mapping(item, item_key, AMPLIFIER_KEYS)
            except Recorded:
                continue
            name = m.need(
                "name", r.line_text, "a name for this amplifier, such as phase current", ""
            )
            spec = m.need("spec", self.spec, "a spec file path or an inline spec mapping", None)
            quantity = m.opt("quantity", r.integer(f"a whole number from 1 to {MAX_QUANTITY}"), 1)
            if (
                m.has("quantity")
                and r.ok(m.child("quantity"))
                and not 1 <= quantity <= MAX_QUANTITY
            ):
                r.problem(
                    m.child("quantity"),
                    m.line_of("quantity"),
                    f"expected a whole number from 1 to {MAX_QUANTITY}, got {quantity}",
                )
            prefix = m.opt("designator", r.text, default_prefix(index))
            if m.has("designator") and r.ok(m.child("designator")):
                if not PREFIX_PATTERN.fullmatch(prefix):
                    r.problem(
                        m.child("designator"),
                        m.line_of("designator"),
                        f"{prefix!r} is not a designator prefix: expected a letter, then "
                        "letters, digits or _, not ending in a digit (the channel number "
                        "follows), at most 12 characters",
                    )
            if name and name in names:
                r.problem(
                    m.child("name"),
                    m.line_of("name"),
                    f"{name!r} is already the name of {names[name]}",
                )
            names.setdefault(name, item_key)
            if prefix.upper() in prefixes:
                r.problem(
                    m.child("designator"),
                    m.line_of("designator"),
                    f"designator prefix {prefix!r} is already used by {prefixes[prefix.upper()]}",
                )
            prefixes.setdefault(prefix.upper(), item_key)
            if r.ok(item_key) and spec is not None:
                out.append(BoardAmplifier(name, spec, quantity, prefix))
        if not r.ok(key):
            raise Recorded
        return tuple(out)

    def purchasing(self, parent: Section) -> Purchasing | None:
        r = self.r
        m = r.section(parent, "purchasing", PURCHASING_KEYS)
        defaults = Purchasing()
        if m is None:
            return None if not r.ok("purchasing") else defaults
        cost = r.number("a relative cost of zero or more such as 0.5")
        catalogs = m.opt("catalogs", self.schema.catalogs, defaults.catalogs)
        builtin = m.opt("builtin_catalogs", r.boolean, defaults.use_builtin_catalogs)
        stock = m.opt("stock", r.choice(StockPolicy), defaults.stock)
        penalty = defaults.stock_penalty
        if stock is StockPolicy.PREFER:
            penalty = m.need(
                "stock_penalty",
                cost,
                "a relative cost of zero or more (required with stock: prefer)",
                0.0,
            )
        elif m.has("stock_penalty") and r.ok("purchasing.stock"):
            r.problem(
                "purchasing.stock_penalty",
                m.line_of("stock_penalty"),
                "only used with stock: prefer; set stock: prefer or remove this key",
            )
        line_cost = m.opt("line_cost", cost, defaults.line_cost)
        placement_cost = m.opt("placement_cost", cost, defaults.placement_cost)
        max_lines = m.opt("max_lines", self.bounded(1, None), None)
        alternatives = m.opt("alternatives", self.bounded(1, 100), defaults.alternatives)
        if not r.ok("purchasing"):
            return None
        try:
            return Purchasing(
                catalogs=catalogs,
                use_builtin_catalogs=builtin,
                stock=stock,
                stock_penalty=penalty,
                line_cost=line_cost,
                placement_cost=placement_cost,
                max_lines=max_lines,
                alternatives=alternatives,
            )
        except ModelError as exc:
            fields = {name: f"purchasing.{name}" for name in PURCHASING_KEYS}
            r.model_error(exc, "purchasing", fields)
            return None

    def board(self, root: Node) -> Board | None:
        r = self.r
        if not isinstance(root, MappingNode):
            r.fail(
                "",
                node_line(root),
                f"expected a mapping with keys {', '.join(TOP_KEYS)} at the top level",
            )
        top = r.mapping(root, "", TOP_KEYS, line=node_line(root))
        top.need(
            "quartet_board", self.version, f"the board format version, {BOARD_FORMAT_VERSION}", 0
        )
        title = top.opt("title", r.line_text, None)
        none: tuple[BoardAmplifier, ...] = ()
        amplifiers = top.need("amplifiers", self.amplifiers, "a list of amplifiers", none)
        purchasing = self.purchasing(top)
        if r.problems or self.foreign or purchasing is None or not amplifiers:
            return None
        warnings = [text for _, text in sorted(r.warnings)]
        for amplifier in amplifiers:
            warnings.extend(amplifier.spec.warnings)
        return Board(amplifiers, purchasing, title, r.path, tuple(dict.fromkeys(warnings)))


def parse_board_text(text: str, path: str) -> Board:
    """Read a board from YAML ``text``; ``path`` names the file in messages and is the base
    for relative spec and catalog paths. Raises :class:`SpecError` listing every problem."""
    try:
        root = compose_yaml(text, "a board file", 7)
    except YamlTrouble as exc:
        raise SpecError(exc.message, path=path, line=exc.line) from None
    if root is None:
        raise SpecError(
            "the file is empty; expected a mapping starting with "
            f"quartet_board: {BOARD_FORMAT_VERSION}",
            path=path,
            line=1,
        )
    reader = _BoardReader(path)
    try:
        board = reader.board(root)
    except Recorded:
        board = None
    problems = [*reader.r.problems, *reader.foreign]
    if problems:
        raise _combined(path, problems)
    assert board is not None
    return board


def load_board(path: str | os.PathLike[str]) -> Board:
    """Read and check the board file at ``path`` (and the spec files it names). Raises
    :class:`SpecError`, located by file, line and key path."""
    name, text = read_document(path, "board")
    return parse_board_text(text, name)
