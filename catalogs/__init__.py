"""Built-in catalog data of Quartet (installed as the package ``optimizer.catalogs``).

This folder holds data files only: the discrete-resistor recipe and the matched-network
catalog. ``optimizer.catalog.builtin_data_folder`` finds them with :mod:`importlib.resources`
in an install (plain or editable) and falls back to this folder of a source checkout used
without installing.
"""
