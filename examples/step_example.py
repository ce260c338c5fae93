"""Step test: gain, dead time and lags with intervals, step figures and starting PI gains.

Run from anywhere:  python examples/step_example.py
The record is invented demonstration data bundled in datasets/ (see datasets/README.md).
"""
from pathlib import Path

from identify.step import analyse_step
from identify.validation import validate

DATA = Path(__file__).resolve().parent.parent / "datasets"

result = analyse_step(DATA / "valve_step.csv", input="valve_cmd", output="flow", confidence=0.95)
summary = result.to_dict()  # the JSON contract: model, poles, metrics, tuning, warnings
model = summary["model"]
print(f"{result.source}: {model['structure']} model")
print(f"  gain {model['gain']:.4g}, dead time {model['dead_time_s']:.3g} s, "
      f"time constants {', '.join(f'{tau:.3g} s' for tau in model.get('time_constants_s') or [])}")
for pole in result.poles:
    ci = pole.ci
    if pole.is_real and pole.time_constant_s is not None:
        print(f"  real pole, time constant {pole.time_constant_s:.3g} s "
              f"(natural frequency {pole.natural_frequency_hz:.4g} Hz)")
    else:
        print(f"  fn = {pole.natural_frequency_hz:.4g} Hz, zeta = {pole.damping_ratio:.3f}")
print(f"  step figures: {summary['metrics']}")
print(f"  starting controller gains (a starting point to review, not to apply): {summary.get('tuning')}")

check = validate(result.response)
print(f"  fit {check.fit_percent:.1f} % against the record: {check.verdict}")
for warning in result.warnings:
    print(f"  warning: {warning}")
print("Step tests on running plants need the site's approval; gains are starting points to review.")
