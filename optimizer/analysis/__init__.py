"""The exact error model of the difference amplifier: pure numpy, no printing, no file access.

Modules: ``transfer`` (closed-form gains), ``variation`` (how parts vary: corners and samples),
``balance`` (the bridge-balance formulas), ``worstcase`` (corner enumeration and error budget)
with ``scalesearch`` (the interior of shared groups' scale), ``montecarlo`` (yield and percentiles),
``checks`` (impedance, noise, ranges, bandwidth, ratings, offset) over the corners of
``operating``, ``safety`` (the cautions).
"""
