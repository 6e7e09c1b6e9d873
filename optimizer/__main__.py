"""``python -m optimizer`` runs the Quartet command line."""

from __future__ import annotations

from .cli import main_entry

main_entry()
