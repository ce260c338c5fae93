"""The measured record beside the model's simulated response: what validation and plots use."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["ModelResponse"]


@dataclass(frozen=True)
class ModelResponse:
    """A model simulated back on the record's own time base.

    Parameters
    ----------
    time_s : numpy.ndarray
        Time of each sample of the analysed part of the record, in seconds.
    measured : numpy.ndarray
        The measured output channel on ``time_s``.
    model : numpy.ndarray
        The model's simulated output on ``time_s`` (free decay: the fitted response;
        step: the model driven by the measured input; ARX: simulation, not one-step
        prediction).
    input : numpy.ndarray, optional
        The measured input channel, for input/output jobs.
    unit : str
        Unit of ``measured`` and ``model``.
    label : str
        What ``model`` is, in words (shown in plots and reports).
    holdout_start_s : float, optional
        Where a held-out validation part begins (samples before it were used to fit).
    """

    time_s: np.ndarray
    measured: np.ndarray
    model: np.ndarray
    input: np.ndarray | None = None
    unit: str = ""
    label: str = "model"
    holdout_start_s: float | None = None

    def __post_init__(self):
        # read-only: a writeable array is copied (its owner may change it later); a
        # read-only float array is kept as it is (a record's channel, say: no copy of
        # millions of samples)
        for name in ("time_s", "measured", "model", "input"):
            value = getattr(self, name)
            if value is not None:
                arr = np.asarray(value, dtype=float)
                if arr.flags.writeable:
                    arr = arr.copy()
                    arr.setflags(write=False)
                object.__setattr__(self, name, arr)
        n = {self.time_s.size, self.measured.size, self.model.size}
        if len(n) != 1:
            raise ValueError(f"time_s, measured and model differ in length: {sorted(n)}")

    @property
    def residual(self) -> np.ndarray:
        return self.measured - self.model

    def to_dict(self) -> dict:  # arrays are not part of the JSON contract
        return {"label": self.label, "unit": self.unit, "samples": int(self.time_s.size),
                "holdout_start_s": self.holdout_start_s}
