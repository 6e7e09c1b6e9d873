"""An exact reference search for the tests, written apart from the pick (``optimizer.solve``).

See :mod:`reference.cheapest` for what it does and why its pruning is safe."""
