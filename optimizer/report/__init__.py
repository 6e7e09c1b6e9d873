"""Rendering for the terminal and for files: Rich tables, JSON, CSV, netlists.

One module per output: ``catalog`` (catalog summaries), ``spec`` (spec summaries), and later
``check``, ``pick``. Only the CLI prints what these return.
"""
