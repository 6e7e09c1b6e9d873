"""Write the generated parts of the manual: ``docs/cli.md`` (every command's options, from the
argparse parser itself) and ``docs/schemas/*.json`` (the JSON schemas of ``--json``, from
:mod:`optimizer.report.schemas`). ``tests/test_docs.py`` fails when they are out of date.

Run from anywhere: ``python tests/docs_gen.py``.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
if str(ROOT) not in sys.path:  # a checkout used without installing
    sys.path.append(str(ROOT))

from optimizer.cli import build_parser  # noqa: E402
from optimizer.report.schemas import CHECK_SCHEMA, PICK_SCHEMA  # noqa: E402

#: Width the help text is wrapped at (argparse reads COLUMNS).
HELP_COLUMNS = "100"
SCHEMAS = {"quartet-pick.schema.json": PICK_SCHEMA, "quartet-check.schema.json": CHECK_SCHEMA}


def _parsers(
    parser: argparse.ArgumentParser, words: tuple[str, ...] = ()
) -> list[tuple[tuple[str, ...], argparse.ArgumentParser]]:
    """Every (sub)command parser with the words that call it, depth first."""
    found = [(words, parser)]
    for action in parser._actions:  # argparse keeps subcommands only here
        if isinstance(action, argparse._SubParsersAction):
            for name, sub in action.choices.items():
                found += _parsers(sub, (*words, name))
    return found


def cli_reference() -> str:
    """The text of docs/cli.md."""
    saved = os.environ.get("COLUMNS")
    os.environ["COLUMNS"] = HELP_COLUMNS
    try:
        parts = [
            "# Command-line reference\n\n"
            "Generated from the parser by `python tests/docs_gen.py`; do not edit by hand. "
            "Exit codes for every command: 0 done, 1 a requirement not met or nothing meets "
            "the spec, 2 bad input, 3 the time limit ended the search, 130 / 143 interrupted "
            "(SIGINT / SIGTERM).\n"
        ]
        for words, parser in _parsers(build_parser()):
            title = " ".join(("quartet", *words))
            parts.append(f"\n## `{title}`\n\n```text\n{parser.format_help().rstrip()}\n```\n")
    finally:
        if saved is None:
            os.environ.pop("COLUMNS", None)
        else:
            os.environ["COLUMNS"] = saved
    return "".join(parts)


def schema_text(schema: dict[str, object]) -> str:
    """A schema as the committed .json file holds it."""
    return json.dumps(schema, indent=2, sort_keys=True, ensure_ascii=False) + "\n"


def main() -> None:
    docs = ROOT / "docs"
    (docs / "schemas").mkdir(parents=True, exist_ok=True)
    (docs / "cli.md").write_text(cli_reference(), encoding="utf-8")
    for name, schema in SCHEMAS.items():
        (docs / "schemas" / name).write_text(schema_text(schema), encoding="utf-8")
    print(f"wrote {docs / 'cli.md'} and {len(SCHEMAS)} schemas in {docs / 'schemas'}")


if __name__ == "__main__":
    main()
