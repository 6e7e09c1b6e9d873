"""Built-in catalog data of Quartet (installed as the package ``optimizer.catalogs``).

This folder holds data files only: the discrete-resistor recipe and the matched-network
catalog. ``optimizer.catalog`` finds them with :mod:`importlib.resources`, so they are found
both from a source checkout and after a non-editable wheel install.
"""
