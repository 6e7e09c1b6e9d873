"""Safety cautions for designs whose inputs can carry hazardous voltages (above the commonly used
extra-low-voltage limits). Quartet states the usual cautions and defers to local codes and
licensed practice; it checks none of these points itself.
"""

from __future__ import annotations

import math

from ..spec import Spec
from .formulas import input_peak_v

__all__ = [
    "ELV_AC_RMS_V",
    "ELV_DC_V",
    "safety_cautions",
]


#: Commonly used extra-low-voltage limits: 60 V ripple-free DC and 30 V AC rms.
ELV_DC_V = 60.0
ELV_AC_RMS_V = 30.0


def safety_cautions(spec: Spec) -> tuple[str, ...]:
    """Cautions when an input can exceed the commonly used extra-low-voltage limits: 60 V DC, or
    for an AC (mains-derived, ranges in peak volts) signal 30 V rms, compared as peak/√2. Empty
    when the inputs stay within them (at the limit counts as within)."""
    peak = input_peak_v(spec)
    if spec.signal.ac:
        level, limit = peak / math.sqrt(2.0), ELV_AC_RMS_V
        what = f"{peak:.4g} V peak ({level:.4g} V rms for a sine)"
        kind = "AC rms"
    else:
        level, limit, what, kind = peak, ELV_DC_V, f"{peak:.4g} V", "DC"
    if level <= limit:
        return ()
    return (
        f"Hazardous voltage: an input can reach {what}, above the {limit:g} V {kind} usually "
        "treated as the ceiling of extra-low voltage. Treat the input network as part of a "
        "hazardous-voltage circuit.",
        "No isolation: the four resistors are the only thing between the source and the "
        "low-voltage side (amplifier, REF drive, ground). A resistor that fails short or arcs "
        "over brings the source voltage onto that side; choose parts, or series strings of "
        "parts, whose voltage and surge ratings suit the working voltage.",
        "Creepage and clearance: keep the input resistors, their pads, traces and connectors "
        "far enough from low-voltage copper, mounting holes and the enclosure for this working "
        "voltage, pollution degree and altitude; the distances come from the safety standard "
        "that applies to your product, not from Quartet.",
        "Insulation: decide which barriers need basic, supplementary or reinforced insulation "
        "and how they are tested; anything a person can touch must stay separated from the input "
        "side.",
        "Quartet checks none of these points. Follow the local electrical codes and the product "
        "safety standards that apply, and have the design reviewed by a qualified, licensed "
        "person before it is connected to such a source.",
    )
