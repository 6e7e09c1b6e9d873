"""``quartet board``: the board file's located errors, the outputs, the exit codes, and the
merged BOM checked against the designs the board chose.

Sources of the expected values: the board cost rule as the README states it (Σ quantity ×
(parts + placements) + line cost × distinct part ids), recomputed here with plain Python from
the part figures of the house-stock CSV, read back with the ``csv`` module (invented demo
data; common practice for how purchasing pays per BOM line). The BOM CSV is read back with
the ``csv`` module.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest
from helpers import EXAMPLES, run_cli
from hypothesis import given, settings
from hypothesis import strategies as st

from optimizer.board.boardfile import parse_board_text
from optimizer.cli import EXIT_BAD_INPUT, EXIT_NOT_MET, EXIT_OK
from optimizer.errors import SpecError
from optimizer.report.schemas import BOARD_SCHEMA, schema_errors

BOARD = EXAMPLES / "drive_board.yaml"
HOUSE_CSV = EXAMPLES / "house_stock.csv"


def run(args: list[str]) -> tuple[int, str, str]:
    return run_cli(args)


def house_parts() -> dict[str, dict[str, str]]:
    lines = [line for line in HOUSE_CSV.read_text().splitlines() if not line.startswith("#")]
    return {row["part_id"]: row for row in csv.DictReader(lines)}


@pytest.fixture(scope="module")
def board_run(tmp_path_factory: pytest.TempPathFactory) -> tuple[int, dict, str, Path]:
    folder = tmp_path_factory.mktemp("board")
    bom, report = folder / "bom.csv", folder / "board.md"
    json_out = folder / "board.json"
    code, out, err = run(
        [
            "board", str(BOARD), "--top", "2", "--bom", str(bom), "--report", str(report),
            "--json-out", str(json_out),
        ]
    )  # fmt: skip
    assert code == EXIT_OK, err
    return code, json.loads(json_out.read_text()), out, folder


def test_board_json_totals_match_the_cost_rule(board_run: tuple[int, dict, str, Path]) -> None:
    """The board total recomputed from the chosen part ids and the house-stock costs
    (source: the README's board cost rule; costs from the CSV)."""
    _, document, _, _ = board_run
    assert document["schema"] == "quartet-board/1"
    assert document["search"]["status"] == "proven_optimal"
    parts = house_parts()
    purchasing = document["purchasing"]
    for board in [document["boards"][0], document["alone"]]:
        ids: set[str] = set()
        total = 0.0
        for amplifier in board["amplifiers"]:
            channel = sum(float(parts[p["part_id"]]["cost"]) for p in amplifier["positions"])
            channel += 4 * purchasing["placement_cost"]  # four discrete parts per channel
            total += amplifier["quantity"] * channel
            ids |= {p["part_id"] for p in amplifier["positions"]}
        total += purchasing["line_cost"] * len(ids)
        assert board["cost"]["total"] == pytest.approx(total, rel=1e-12)
        assert board["cost"]["line_count"] == len(ids)
    saving = document["saving"]
    assert saving["board_total"] <= saving["alone_total"]
    assert saving["saving"] == pytest.approx(saving["alone_total"] - saving["board_total"])


def test_board_bom_counts_every_position(board_run: tuple[int, dict, str, Path]) -> None:
    """Every position of every channel appears once in the BOM CSV, under its part id."""
    _, document, _, folder = board_run
    rows = list(csv.DictReader(io.StringIO((folder / "bom.csv").read_text())))
    expected: dict[str, set[str]] = {}
    for amplifier in document["boards"][0]["amplifiers"]:
        for channel in range(1, amplifier["quantity"] + 1):
            for p in amplifier["positions"]:
                designator = f"{amplifier['designator_prefix']}{channel}-{p['position']}"
                expected.setdefault(p["part_id"], set()).add(designator)
    assert {r["part_id"]: set(r["designators"].split()) for r in rows} == expected
    for row in rows:
        assert int(row["quantity"]) == len(row["designators"].split())
    text = (folder / "board.md").read_text()
    assert "Merged BOM" in text and "Totals" in text


def test_board_table_output(board_run: tuple[int, dict, str, Path]) -> None:
    _, document, out, _ = board_run
    assert "Merged BOM of the best board" in out
    assert "Each amplifier picked alone:" in out and "Saving:" in out
    assert "proven optimal" in out
    assert len(document["boards"]) == 2
    assert document["boards"][0]["cost"]["total"] <= document["boards"][1]["cost"]["total"]


BOARD_HEAD = "quartet_board: 1\namplifiers:\n"


@pytest.mark.parametrize(
    ("body", "expected"),
    [
        ("  - {name: a, spec: nowhere.yaml}\n", "board.yaml:3: amplifiers[0].spec: spec file 'nowhere.yaml' not found"),
        ("  - {name: a, spec: nowhere.yaml, quantity: 0}\n", "amplifiers[0].quantity: expected a whole number from 1 to 1000, got 0"),
        ("  - {name: a, spec: {requirements: {gain: x}}}\n", "amplifiers[0].spec.requirements.gain: expected a gain above zero"),
        ("  - {name: a, spec: x.yaml, designator: P1}\n", "amplifiers[0].designator: 'P1' is not a designator prefix"),
        ("  - {name: a, spec: x.yaml, colour: red}\n", "amplifiers[0].colour: unknown key 'colour'"),
        ("  []\n", "amplifiers: expected at least one amplifier"),
    ],
)  # fmt: skip
def test_board_file_errors_are_located(body: str, expected: str) -> None:
    with pytest.raises(SpecError) as caught:
        parse_board_text(BOARD_HEAD + body, "board.yaml")
    assert expected in str(caught.value)


def test_board_purchasing_errors(tmp_path: Path) -> None:
    text = BOARD_HEAD + "  - {name: a, spec: x.yaml}\npurchasing: {stock: prefer, max_lines: 0}\n"
    with pytest.raises(SpecError) as caught:
        parse_board_text(text, str(tmp_path / "board.yaml"))
    message = str(caught.value)
    assert "purchasing.stock_penalty: required key is missing" in message
    assert "purchasing.max_lines: expected a whole number of 1 or more, got 0" in message


def test_bad_board_exits_2_and_writes_nothing(tmp_path: Path) -> None:
    board = tmp_path / "board.yaml"
    board.write_text(BOARD_HEAD + "  - {name: a, spec: missing.yaml}\n")
    bom = tmp_path / "bom.csv"
    code, _, err = run(["board", str(board), "--bom", str(bom)])
    assert code == EXIT_BAD_INPUT
    assert "spec file 'missing.yaml' not found" in err and "Traceback" not in err
    assert not bom.exists()


def test_existing_output_is_kept_without_force(tmp_path: Path) -> None:
    bom = tmp_path / "bom.csv"
    bom.write_text("mine\n")
    code, _, err = run(["board", str(BOARD), "--bom", str(bom)])
    assert code == EXIT_BAD_INPUT and "exists" in err
    assert bom.read_text() == "mine\n"


def test_an_amplifier_that_cannot_be_met_exits_1_with_its_diagnosis(tmp_path: Path) -> None:
    """A 0.0001 % gain accuracy: no part of the house stock comes near (its best is ±0.05 %)."""
    spec = (EXAMPLES / "drive_phase_current.yaml").read_text()
    (tmp_path / "hard.yaml").write_text(
        spec.replace("gain_accuracy: 2 %", "gain_accuracy: 0.0001 %")
    )
    (tmp_path / "house_stock.csv").write_text(HOUSE_CSV.read_text())
    board = tmp_path / "board.yaml"
    board.write_text(
        BOARD_HEAD
        + "  - {name: too precise, spec: hard.yaml}\n"
        + "purchasing: {catalogs: [house_stock.csv], builtin_catalogs: false, line_cost: 1}\n"
    )
    code, out, _ = run(["board", str(board), "--time-limit", "20"])
    assert code == EXIT_NOT_MET
    assert "nothing in the catalogs meets too precise" in out
    assert "Diagnosis of too precise" in out
    # the JSON document of a board that cannot be built still matches its schema
    code, text, _ = run(["board", str(board), "--time-limit", "20", "--json"])
    document = json.loads(text)
    assert schema_errors(document, BOARD_SCHEMA) == []
    assert document["boards"] == [] and document["diagnosis"][0]["amplifier"] == "too precise"


def test_board_json_matches_its_schema(board_run: tuple[int, dict, str, Path]) -> None:
    """The quartet-board/1 document of the example validates against the published schema
    (docs/schemas/quartet-board.schema.json), which refuses unknown keys and wrong types."""
    _, document, _, _ = board_run
    assert schema_errors(document, BOARD_SCHEMA) == []
    broken = {**document, "saving": {"board_total": "cheap"}}
    assert schema_errors(broken, BOARD_SCHEMA) != []


@settings(max_examples=80, deadline=None, derandomize=True, database=None)
@given(data=st.data())
def test_board_reader_on_mutated_example(data: st.DataObject) -> None:
    """Random edits of the example board file (lines dropped, values swapped for odd ones):
    the reader returns a board or a located SpecError, never another exception."""
    lines = BOARD.read_text(encoding="utf-8").splitlines()
    odd = ["", "x", "-1", "0", "1e400", "[]", "{}", "null", "'", "~", "1000000", "@"]
    for _ in range(data.draw(st.integers(1, 4))):
        index = data.draw(st.integers(0, len(lines) - 1))
        line = lines[index]
        if data.draw(st.booleans()) or ":" not in line:
            del lines[index]
        else:
            key = line.split(":", 1)[0]
            lines[index] = f"{key}: {data.draw(st.sampled_from(odd))}"
        if not lines:
            break
    text = "\n".join(lines)
    path = str(BOARD)  # the real path: relative spec and catalog paths resolve
    try:
        parse_board_text(text, path)
    except SpecError as exc:
        assert str(exc).startswith(path)
