"""Generate the invented demo captures in this folder.

Scenario (invented): the office of the "Harbour Lane Primary School"
(``harbour_school.toml``, fixture type ``office-downlight-measured``) has 9 W LED
downlights. A commissioning technician recorded one downlight's supply voltage and current
with a portable recorder at 25 kS/s, once at full output (no dimmer) and once behind the
office's leading-edge wall dimmer set to about 100 deg conduction.

The lamp is simulated here as a bridge rectifier with a 22 ohm fusible resistor, a 6.8 uF
bulk capacitor and an LED load (an invented lamp) whose current is set so that the lamp
draws its declared 9 W at full output; the supply is 230 V with a slightly flat-topped wave
at 49.97 Hz, not synchronous with the recorder, plus recorder noise. Each file's header
names the site (``# site: ...``) and the declared power (``# declared_power_w: ...``);
``tests/test_demo_data.py`` checks both against the installation file that uses it.
Run ``python make_demo_captures.py`` to rewrite the files.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

HERE = Path(__file__).parent
FS = 25_000.0  # recorder sample rate [Hz]
F_MAINS = 49.97  # [Hz]
V_RMS = 230.0
DURATION_S = 0.6
POWER_W = 9.0  # the downlight's declared power at full output [W]
SITE = "Harbour Lane Primary School, office (invented)"


def supply(t: np.ndarray) -> np.ndarray:
    w = 2 * np.pi * F_MAINS * t
    # flat-topped mains: 2.5 % fifth and 1.2 % third harmonic (invented)
    return np.sqrt(2) * V_RMS * (np.sin(w) - 0.012 * np.sin(3 * w) - 0.025 * np.sin(5 * w))


def simulate(conduction_deg: float | None, seed: int, i_led: float,
             duration_s: float = DURATION_S, noise: bool = True
             ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Recorder samples ``(t [s], v [V], i [A])`` of the downlight; ``i_led`` scales the
    LED load [A at 270 V on the capacitor]; ``noise`` adds the recorder's noise."""
    r_s, c, v_led_min = 22.0, 6.8e-6, 120.0
    sub = 40  # internal steps per recorder sample
    dt = 1 / FS / sub
    n = int(duration_s * FS)
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
    scale = 1.0 if noise else 0.0
    volts = v[::sub] + scale * rng.normal(0, 0.3, n)
    amps = i_line.reshape(n, sub).mean(axis=1) + scale * rng.normal(0, 0.0005, n)
    return t, volts, amps


def mean_power_w(i_led: float) -> float:
    """Power the lamp draws at full output [W]: the mean of v*i over the whole cycles of the
    last 0.3 s of a 0.4 s run (the capacitor has settled), without recorder noise."""
    t, v, i = simulate(None, 0, i_led, duration_s=0.4, noise=False)
    keep = t >= t[-1] - np.floor(0.3 * F_MAINS) / F_MAINS
    return float(np.mean(v[keep] * i[keep]))


def led_current_for(power_w: float) -> float:
    """The LED load at which the lamp draws ``power_w`` at full output (secant search)."""
    a, b = 0.02, 0.035
    pa, pb = mean_power_w(a), mean_power_w(b)
    for _ in range(20):
        c = b + (power_w - pb) * (b - a) / (pb - pa)
        a, pa, b, pb = b, pb, c, mean_power_w(c)
        if abs(pb - power_w) < 1e-4 * power_w:
            break
    return b


def main() -> None:
    i_led = led_current_for(POWER_W)
    print(f"LED load {i_led:.6f} A for {POWER_W:g} W")
    for name, cond, seed in (("downlight_full.csv", None, 1), ("downlight_dimmed.csv", 100.0, 2)):
        t, v, i = simulate(cond, seed, i_led)
        state = "full output" if cond is None else f"leading-edge dimmer at {cond:g} deg"
        lines = [f"# site: {SITE}",
                 f"# fixture: downlight, {state} (invented demo data)",
                 f"# declared_power_w: {POWER_W:g}",
                 "time_s,voltage_v,current_a"]
        lines += [f"{a:.6f},{b:.3f},{c:.6f}" for a, b, c in zip(t, v, i, strict=True)]
        (HERE / name).write_text("\n".join(lines) + "\n")
        print(f"wrote {name}: {t.size} samples")


if __name__ == "__main__":
    main()
