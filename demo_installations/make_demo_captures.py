"""Generate the invented demo captures in this folder.

Scenario (invented): the reading room of the "Larkfield Street Library" is to be retrofitted
with 9 W LED downlights. A commissioning technician recorded one downlight's supply voltage
and current with a portable recorder at 25 kS/s, once at full output (no dimmer) and once
behind the room's leading-edge wall dimmer set to about 100 deg conduction.

The lamp is simulated here as a bridge rectifier with a 22 ohm fusible resistor, a 6.8 uF
bulk capacitor and a constant-current LED load drawing about 9 W (an invented lamp); the
supply is 230 V with a slightly flat-topped wave at 49.97 Hz, not synchronous with the
recorder, plus recorder noise. Run ``python make_demo_captures.py`` to rewrite the files.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

HERE = Path(__file__).parent
FS = 25_000.0  # recorder sample rate [Hz]
F_MAINS = 49.97  # [Hz]
V_RMS = 230.0
DURATION_S = 0.6


def supply(t: np.ndarray) -> np.ndarray:
    w = 2 * np.pi * F_MAINS * t
    # flat-topped mains: 2.5 % fifth and 1.2 % third harmonic (invented)
    return np.sqrt(2) * V_RMS * (np.sin(w) - 0.012 * np.sin(3 * w) - 0.025 * np.sin(5 * w))


def simulate(conduction_deg: float | None, seed: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    r_s, c, i_led, v_led_min = 22.0, 6.8e-6, 0.035, 120.0
    sub = 40  # internal steps per recorder sample
    dt = 1 / FS / sub
    n = int(DURATION_S * FS)
    t_fine = np.arange(n * sub) * dt
    v = supply(t_fine)
    if conduction_deg is not None:
        phase = (2 * np.pi * F_MAINS * t_fine) % np.pi
        v = np.where(phase >= np.pi - np.radians(conduction_deg), v, 0.0)
    vc = np.sqrt(2) * V_RMS * 0.95
    i_line = np.empty_like(v)
    for k in range(v.size):
        drive = abs(v[k]) - vc
        i = drive / r_s if drive > 0 else 0.0
        load = i_led * min(1.0, max(vc - v_led_min, 0.0) / 30.0) * (vc / 270.0)
        vc += (i - load) * dt / c
        i_line[k] = np.sign(v[k]) * i
    rng = np.random.default_rng(seed)
    t = t_fine[::sub]
    volts = v[::sub] + rng.normal(0, 0.3, n)
    amps = i_line.reshape(n, sub).mean(axis=1) + rng.normal(0, 0.0005, n)
    return t, volts, amps


def main() -> None:
    for name, cond, seed in (("downlight_full.csv", None, 1), ("downlight_dimmed.csv", 100.0, 2)):
        t, v, i = simulate(cond, seed)
        lines = ["# Larkfield Street Library, reading room, 9 W downlight (invented demo data)",
                 "time_s,voltage_v,current_a"]
        lines += [f"{a:.6f},{b:.3f},{c:.6f}" for a, b, c in zip(t, v, i)]
        (HERE / name).write_text("\n".join(lines) + "\n")
        print(f"wrote {name}: {t.size} samples")


if __name__ == "__main__":
    main()
