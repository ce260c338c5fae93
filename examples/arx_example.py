"""Input/output record: poles of a motor stage from an ARX model, with intervals.

Run from anywhere:  python examples/arx_example.py
The record is invented demonstration data bundled in datasets/ (see datasets/README.md).
"""
from pathlib import Path

from identify.arx import analyse_arx
from identify.validation import validate

DATA = Path(__file__).resolve().parent.parent / "datasets"

result = analyse_arx(DATA / "motor_prbs.csv", input="drive", output="speed", confidence=0.95)
model = result.model
print(f"{result.source}: ARX na = {model.na}, nb = {model.nb}, delay = {model.delay_samples} samples")
for pole in result.poles:
    ci = pole.ci
    if pole.is_real:
        print(f"  real pole: time constant {pole.time_constant_s:.4g} s, {pole.verdict}")
    else:
        print(f"  fn = {pole.natural_frequency_hz:.3f} Hz "
              f"[{ci.natural_frequency_hz[0]:.3f}, {ci.natural_frequency_hz[1]:.3f}] Hz, "
              f"zeta = {pole.damping_ratio:.4f} [{ci.damping_ratio[0]:.4f}, {ci.damping_ratio[1]:.4f}], "
              f"{pole.verdict}")

check = validate(result.response)  # simulation from the input, with the hold-out part
print(f"  simulation fit {check.fit_percent:.1f} %, hold-out fit {check.holdout_fit_percent:.1f} % "
      f"over {check.holdout_samples} samples: {check.verdict}")
for warning in result.warnings:
    print(f"  warning: {warning}")
print("Estimates, not clearances: defer to the site's procedures and licensed engineers.")
