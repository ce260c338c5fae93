"""The free-decay job's result: :class:`DecayResult` and its JSON contract."""
from __future__ import annotations

from dataclasses import dataclass, field

__all__ = ["DecayResult", "CONTRACT_VERSION"]

#: version of the decay job's JSON contract (docs/json-contract.md, "Decay job")
CONTRACT_VERSION = 1


@dataclass(frozen=True)
class DecayResult:
    """Poles of one free-decay record, with intervals, cross-checks and warnings.

    Parameters
    ----------
    source : str
        The file (or ``"<array>"``) analysed.
    sha256 : str
        SHA-256 of the source (record identity).
    column : str
        Name of the channel analysed.
    unit : str
        Unit of that channel (``""`` when unknown).
    segment : dict
        The part analysed: ``start_s``, ``end_s`` and what detection chose
        (``trigger_s``, ``chosen_by``, ``noise_std``, ``pretrigger_samples``...).
    poles : tuple of identify.poles.Pole
        The answer: one pole per mode (``imag >= 0``), sorted by frequency, with intervals.
    method : str
        Method that gave :attr:`poles` (``"fit"`` for the default ``method="auto"``).
    methods : dict
        Method name → :class:`~identify.decay.MethodEstimate`, every method that ran.
    consensus : tuple of dict
        Per mode of the answer: each method's matching estimate and interval, and
        whether the intervals agree.
    fit : dict
        ``residual_rms``, ``fit_percent``, ``noise_rms``, ``snr_db``, ``samples`` of the
        answer's model on the analysed segment.
    warnings : tuple of str
        One-line warnings (``"key: text"``).
    settings : dict
        Every option used, so the run can be repeated.
    response : identify._response.ModelResponse
        Measured segment beside the fitted model (for plots and validation).
    order_scan : tuple of dict
        The pencil's poles at neighbouring orders (``{"order", "poles": [[re, im]...]}``).
    """

    source: str
    sha256: str
    column: str
    unit: str
    segment: dict
    poles: tuple
    method: str
    methods: dict
    consensus: tuple
    fit: dict
    warnings: tuple
    settings: dict
    response: object = None
    order_scan: tuple = field(default=())

    def __post_init__(self):
        object.__setattr__(self, "poles", tuple(sorted(self.poles, key=lambda p: p.natural_frequency_hz)))
        object.__setattr__(self, "warnings", tuple(self.warnings))
        object.__setattr__(self, "consensus", tuple(self.consensus))
        object.__setattr__(self, "order_scan", tuple(self.order_scan))

    def to_dict(self) -> dict:
        """The decay job's JSON contract (docs/json-contract.md, "Decay job")."""
        from .._jsonable import jsonable

        return jsonable({
            "job": "decay",
            "contract_version": CONTRACT_VERSION,
            "source": self.source,
            "sha256": self.sha256,
            "column": self.column,
            "unit": self.unit,
            "segment": self.segment,
            "method": self.method,
            "poles": [p.to_dict() for p in self.poles],
            "methods": {k: v.to_dict() for k, v in self.methods.items()},
            "consensus": list(self.consensus),
            "fit": self.fit,
            "warnings": list(self.warnings),
            "settings": self.settings,
        })

    def summary(self, *, warnings: bool = True) -> str:
        """Text table of the poles with units and intervals, the cross-checks, the warnings
        (unless ``warnings=False``: the command line prints them on stderr) and a caution."""
        from ..cli._common import fmt, fmt_interval, table

        level = None
        rows = []
        for i, p in enumerate(self.poles, 1):
            ci = p.ci
            if ci is not None:
                level = ci.level
            rows.append([i, fmt(p.natural_frequency_hz, 6),
                         fmt_interval(None if ci is None else ci.natural_frequency_hz, 6),
                         fmt(p.damping_ratio, 4),
                         fmt_interval(None if ci is None else ci.damping_ratio, 4),
                         fmt(p.decay_rate_per_s, 4), fmt(p.amplitude, 4), p.verdict])
        pct = f"{round(100 * level)} % " if level is not None else ""
        head = (f"{self.source} [{self.column}{', ' + self.unit if self.unit else ''}]  "
                f"segment {fmt(self.segment.get('start_s'), 6)} s to {fmt(self.segment.get('end_s'), 6)} s  "
                f"method {self.method}")
        unit = f" [{self.unit}]" if self.unit else ""
        body = table(["mode", "fn [Hz]", f"fn {pct}CI [Hz]", "zeta [-]", f"zeta {pct}CI",
                      "decay [1/s]", f"amplitude{unit}", "verdict"], rows)
        fit = (f"fit {fmt(self.fit.get('fit_percent'), 4)} %, residual RMS "
               f"{fmt(self.fit.get('residual_rms'), 3, self.unit)}, SNR {fmt(self.fit.get('snr_db'), 3)} dB")
        lines = [head, body, fit]
        checks = []
        for row in self.consensus:
            for name, est in row.get("estimates", {}).items():
                if est is None:
                    continue
                if est.get("own_warnings"):  # the method doubts its own interval here
                    remark = "doubtful here: " + ", ".join(est["own_warnings"])
                elif est.get("agree") is False:
                    remark = "intervals do not overlap" + (" (it seeds the fit: not an independent check)"
                                                           if name == "pencil" else "")
                else:
                    remark = "intervals overlap"
                checks.append([row["mode"], name, fmt(est["natural_frequency_hz"], 6),
                               fmt_interval(est.get("natural_frequency_ci_hz"), 6),
                               fmt(est["damping_ratio"], 4), fmt_interval(est.get("damping_ratio_ci"), 4),
                               remark])
        if checks:
            lines.append("cross-checks:")
            lines.append(table(["mode", "method", "fn [Hz]", "fn CI [Hz]", "zeta [-]", "zeta CI", "remark"],
                               checks))
        if warnings:
            lines.extend(f"warning: {w}" for w in self.warnings)
        lines.append("caution: estimates from one record, not a clearance; "
                     "decisions rest with the site's procedures and licensed engineers.")
        return "\n".join(lines)
