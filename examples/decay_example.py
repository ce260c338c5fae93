"""Free decay: natural frequency and damping ratio, with intervals, of a tapped plate.

Run from anywhere:  python examples/decay_example.py
The record is invented demonstration data bundled in datasets/ (see datasets/README.md).
"""
from pathlib import Path

from identify.decay import analyse_decay
from identify.validation import validate

DATA = Path(__file__).resolve().parent.parent / "datasets"

result = analyse_decay(DATA / "plate_ringdown_semicolon.csv", confidence=0.95)
print(f"{result.source}: {len(result.poles)} mode(s), channel {result.column} [{result.unit}]")
for pole in result.poles:
    ci = pole.ci
    print(f"  fn = {pole.natural_frequency_hz:.3f} Hz "
          f"[{ci.natural_frequency_hz[0]:.3f}, {ci.natural_frequency_hz[1]:.3f}] Hz, "
          f"zeta = {pole.damping_ratio:.4f} [{ci.damping_ratio[0]:.4f}, {ci.damping_ratio[1]:.4f}] "
          f"({ci.level:.0%} intervals), {pole.verdict}")

check = validate(result.response, noise_rms=result.fit.get("noise_rms"))
print(f"  fit {check.fit_percent:.1f} %, residual RMS {check.residual_rms:.3g} {check.unit}: {check.verdict}")
for warning in result.warnings:
    print(f"  warning: {warning}")
print("Estimates, not clearances: defer to the site's procedures and licensed engineers.")
