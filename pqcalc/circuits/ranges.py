"""The range of real parts of the circuit models' component values, declared once: the
solver holds the values a user gives to it, and the installation file reader too."""

from __future__ import annotations

from ..errors import InputError

__all__ = ["COMPONENT_RANGES", "check_component"]


#: Component values of the circuit models, by the unit the model gives each one: the range
#: of real parts [lo, hi] and why. A zero is left to the model (some parts may be left out
#: with 0). The installation file holds its values to the same ranges.
COMPONENT_RANGES: dict[str, tuple[float, float, str]] = {
    "ohm": (1e-6, 1e16, "1 uohm, an ideal switch's stand-in, to 1e16 ohm, an open part"),
    "F": (1e-12, 0.1, "1 pF to 100 mF"),
    "H": (1e-9, 10.0, "1 nH to 10 H"),
    "V": (0.1, 1000.0, "a diode's threshold to past a rectified mains peak"),
    "A": (1e-6, 100.0, "1 uA to 100 A in a lamp or dimmer"),
    "s": (1e-9, 1.0, "1 ns to 1 s"),
    "Hz": (1.0, 1e7, "1 Hz to 10 MHz"),
    "W": (0.0, 1e4, "a lamp's or dimmer's own power"),
    "deg": (0.0, 180.0, "a half cycle"),
    "-": (0.0, 100.0, "a ratio or a small count"),
}


def check_component(where: str, name: str, value: float, unit: str) -> None:
    """Raise InputError naming ``where`` and ``name`` when a given component value is
    outside the range of real parts of its unit (:data:`COMPONENT_RANGES`; 0 is allowed)."""
    r = COMPONENT_RANGES.get(unit)
    if r is None or value == 0:
        return
    lo, hi, why = r
    if not lo <= value <= hi:
        raise InputError(f"{where} {name}: expected {lo:g} to {hi:g} [{unit}] ({why}), got "
                         f"{value:g}")
