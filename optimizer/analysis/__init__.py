"""The exact error model of the difference amplifier: pure numpy, no printing, no file access.

Modules: ``transfer`` (closed-form gains), ``variation`` (how parts vary: corners and samples),
``worstcase`` (corner enumeration and error budget), ``montecarlo`` (yield and percentiles),
``checks`` (impedance, noise, ranges, bandwidth, ratings, offset, safety).
"""
