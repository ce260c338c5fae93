"""The ARX job on a record: :func:`analyse_arx`."""
from __future__ import annotations

import numpy as np

from .._quality import channel_warnings
from .._errors import IdentificationError, ParameterTypeError, ParameterValueError, RecordError
from .._validate import check_choice, check_confidence, check_int, check_positive

__all__ = ["analyse_arx", "DEFAULT_MAX_ORDER", "DEFAULT_MAX_ORDER_AR", "DEFAULT_MAX_DELAY"]

#: Largest na and nb searched with orders="auto" for an input/output model.
DEFAULT_MAX_ORDER = 8
#: Largest na searched with orders="auto" for an output-only autoregression.
DEFAULT_MAX_ORDER_AR = 16
#: Largest delay (samples, after decimation) searched with delay="auto".
DEFAULT_MAX_DELAY = 15
#: Hold-out simulation fit below which a warning is given, percent (common practice, no source).
POOR_FIT_PERCENT = 50.0
#: Equations per parameter below which a warning is given (common practice, no source).
SAMPLES_PER_PARAMETER = 10
#: Samples per period of the fastest pole: fewer warns "coarse sampling", more (without
#: decimation) warns "oversampled" (common practice, no source).
COARSE_SAMPLES_PER_PERIOD = 10.0
OVERSAMPLED_SAMPLES_PER_PERIOD = 60.0
#: Damping below which a pole counts when judging the sampling (heavily damped and
#: real poles are often order artefacts; common practice, no source).
SAMPLING_DAMPING_LIMIT = 0.3

#: Share of the input's power above the band kept by decimation beyond which a warning
#: is given (common practice, no source).
INPUT_POWER_ABOVE_BAND = 0.05

_CRITERIA = ("aic", "aicc", "bic", "fpe")


# -- option parsing -----------------------------------------------------------------
#: Fewest samples an ARX analysis accepts (common practice, no source).
MIN_SAMPLES = 20

def _parse_orders(orders, has_input):
    if isinstance(orders, str):
        text = orders.strip().lower()
        if text == "auto":
            return None
        parts = [p for p in text.replace(";", ",").split(",") if p.strip()]
        try:
            values = [int(p) for p in parts]
        except ValueError:
            raise ParameterValueError(f"orders must be 'auto' or 'NA,NB' (e.g. '2,2'); got {orders!r}") from None
    elif isinstance(orders, (int, np.integer)) and not isinstance(orders, bool):
        values = [int(orders)]
    elif isinstance(orders, (tuple, list)):
        values = [check_int("orders", v, minimum=0) for v in orders]
    else:
        raise ParameterTypeError(f"orders must be 'auto', an int na or a pair (na, nb); got {orders!r}")
    if len(values) == 1:
        values = values + ([values[0]] if has_input else [0])
    if len(values) != 2 or min(values) < 0:
        raise ParameterValueError(f"orders must be 'auto' or two whole numbers NA,NB >= 0; got {orders!r}")
    na, nb = values
    if has_input and nb < 1:
        raise ParameterValueError(f"with an input, nb must be >= 1; got orders {orders!r}")
    if not has_input and nb != 0:
        raise ParameterValueError(f"without an input the model is a pure autoregression: nb must be 0; got orders {orders!r}")
    if na + nb == 0:
        raise ParameterValueError(f"orders {orders!r} leave nothing to estimate")
    return na, nb


def _parse_delay(delay):
    if isinstance(delay, str):
        if delay.strip().lower() == "auto":
            return None
        try:
            delay = int(delay)
        except ValueError:
            raise ParameterValueError(f"delay must be 'auto' or a whole number of samples >= 0; got {delay!r}") from None
    return check_int("delay", delay, minimum=0)


def _parse_decimate(decimate):
    if decimate is None or decimate is False:
        return 1
    if isinstance(decimate, str):
        text = decimate.strip().lower()
        if text == "auto":
            return "auto"
        if text in ("off", "none", "no", "1"):
            return 1
        try:
            decimate = int(text)
        except ValueError:
            raise ParameterValueError(f"decimate must be 'auto', 'off' or a whole factor >= 1; got {decimate!r}") from None
    return check_int("decimate", decimate, minimum=1)


def _load_record(record_or_path, sample_rate_hz, nan):
    from ..records import Record

    if isinstance(record_or_path, Record):
        return record_or_path
    from .._csv import read_record

    return read_record(record_or_path, sample_rate_hz=sample_rate_hz, nan=nan)


def _missing(record, y, u, out_name, in_name, nan):
    """Apply the missing-value policy; return (lo, hi, warning or None)."""
    bad = ~np.isfinite(y)
    if u is not None:
        bad |= ~np.isfinite(u)
    if not bad.any():
        return 0, y.size, None
    first = int(np.flatnonzero(bad)[0])
    which = out_name if not np.isfinite(y[first]) else in_name
    if nan == "raise":
        raise RecordError(
            f"channel {which!r} holds a missing value at t = {record.time_s[first]:g} s (sample {first}); "
            "an ARX fit needs every lag: pass nan='omit' (--nan omit) to use the longest stretch without gaps")
    good = np.concatenate([[False], ~bad, [False]])
    edges = np.flatnonzero(np.diff(good.astype(int)))
    starts, ends = edges[0::2], edges[1::2]
    if starts.size == 0:
        raise RecordError("every sample has a missing value in the output or input channel")
    k = int(np.argmax(ends - starts))
    lo, hi = int(starts[k]), int(ends[k])
    return lo, hi, (f"missing values: {int(bad.sum())} samples hold missing values; analysed the "
                    f"longest stretch without gaps, {hi - lo} of {y.size} samples")


# -- the job ------------------------------------------------------------------------
def analyse_arx(record_or_path, *, output, input=None, orders="auto", delay="auto",
                criterion: str = "bic", confidence: float = 0.95, refine=None,
                holdout: float = 0.3, decimate="auto", start_s=None, end_s=None,
                sample_rate_hz=None, nan: str = "raise", max_order=None,
                max_delay: int = DEFAULT_MAX_DELAY):
    """Identify an ARX model from an input/output (or output-only) record.

    Parameters
    ----------
    record_or_path : Record or path-like
        A :class:`identify.Record` or a CSV file read with :func:`identify.read_record`.
    output : str or int
        Output channel (name, case-insensitive, or 0-based index).
    input : str or int, optional
        Input channel; without it a pure autoregression of the output is fitted (an
        output-only record, e.g. an ambient response).
    orders : "auto", int or (na, nb), default="auto"
        Orders of A and B; ``"auto"`` searches ``na, nb = 1..max_order``.
    delay : "auto" or int, default="auto"
        Input delay nk in samples (of the analysed, possibly decimated, record);
        ``"auto"`` searches ``0..max_delay``.
    criterion : {"aic", "bic", "fpe", "aicc"}, default="bic"
        Information criterion for the search.
    confidence : float, default=0.95
        Level of the pole and gain intervals.
    refine : {None, "iv"}, default=None
        ``"iv"``: instrumental-variable refinement against output (sensor) noise.
    holdout : float, default=0.3
        Final fraction of the record kept out of the fit and used for validation by
        simulation (0 validates on the estimation data).
    decimate : "auto", "off" or int, default="auto"
        Anti-alias filtering and decimation; ``"auto"`` aims at about 15 samples per
        period of the output's 99 % power bandwidth.
    start_s, end_s : float, optional
        Analyse only this time span.
    sample_rate_hz : float, optional
        Sample rate for files without a time column.
    nan : {"raise", "omit"}, default="raise"
        Missing values: raise an error, or analyse the longest stretch without gaps.
    max_order : int, optional
        Largest order searched (default 8 with an input, 16 without).
    max_delay : int, default=15
        Largest delay searched, in samples.

    Returns
    -------
    ArxResult

    Raises
    ------
    ParameterValueError, ParameterTypeError
        Bad options.
    RecordError
        Unreadable record, unknown channel, missing values under ``nan="raise"``.
    IdentificationError
        A constant input or output, more parameters than samples, dependent regressors.

    Notes
    -----
    ``A(q)y(t) = B(q)u(t-nk) + e(t)`` on data centred by the estimation part's means;
    least squares with covariance ``s²(ΦᵀΦ)⁻¹``; orders by information criteria on a
    common sample; poles ``s = ln z / Ts`` with intervals by root perturbation of the
    full coefficient covariance; validation by simulation on the held-out part.
    See docs/arx.md.

    References
    ----------
    Ljung, L., *System Identification: Theory for the User*, 2nd ed., 1999.
    Söderström, T. and Stoica, P., *System Identification*, 1989.
    Guillaume, P., Schoukens, J., Pintelon, R. and Kollár, I., IEEE Trans. Instrum. Meas.
    38(6), 1989.
    Ljung, G. M. and Box, G. E. P., Biometrika 65(2), 1978.
    """
    from ._decimate import (choose_factor, decimate_signals, hold_period, input_limited_factor,
                            largest_divisor, refine_factor)
    from ._fit import check_signals, fit_arx
    from ._orders import order_scan, search_orders

    # -- options -------------------------------------------------------------------
    level = check_confidence(confidence)
    criterion = check_choice("criterion", criterion, _CRITERIA)
    nan = check_choice("nan", nan, ("raise", "omit"))
    if refine is not None:
        refine = check_choice("refine", refine, ("iv",))
    if isinstance(holdout, bool) or not isinstance(holdout, (int, float)):
        raise ParameterTypeError(f"holdout must be a fraction in [0, 1) (e.g. 0.3); got {holdout!r}")
    holdout = float(holdout)
    if not (0.0 <= holdout < 1.0):
        raise ParameterValueError(f"holdout must lie in [0, 1) (e.g. 0.3 for the final 30 %); got {holdout!r}")
    has_input = input is not None
    fixed_orders = _parse_orders(orders, has_input)
    fixed_delay = _parse_delay(delay) if has_input else 0
    q_request = _parse_decimate(decimate)
    max_delay = check_int("max_delay", max_delay, minimum=0)
    if max_order is None:
        max_order = DEFAULT_MAX_ORDER if has_input else DEFAULT_MAX_ORDER_AR
    max_order = check_int("max_order", max_order, minimum=1)
    if sample_rate_hz is not None:
        check_positive("sample_rate_hz", sample_rate_hz)
    if refine == "iv" and not has_input:
        raise ParameterValueError("refine='iv' needs an input channel (instruments are built from the input)")

    # -- record --------------------------------------------------------------------
    record = _load_record(record_or_path, sample_rate_hz, nan)
    if start_s is not None or end_s is not None:
        record = record.segment(start_s, end_s)
    out_ch = record.channel(output)
    in_ch = record.channel(input) if has_input else None
    if in_ch is not None and in_ch.name == out_ch.name:
        raise ParameterValueError(f"output and input are the same channel ({out_ch.name!r})")
    warnings = channel_warnings(outputs=(out_ch,), inputs=() if in_ch is None else (in_ch,))
    y_all = np.asarray(out_ch.values, dtype=float)
    u_all = None if in_ch is None else np.asarray(in_ch.values, dtype=float)
    lo, hi, miss = _missing(record, y_all, u_all, out_ch.name, None if in_ch is None else in_ch.name, nan)
    if miss:
        warnings.append(miss)
    y_all = y_all[lo:hi]
    u_all = None if u_all is None else u_all[lo:hi]
    check_signals(y_all, u_all, 1, 1 if has_input else 0, 0)  # length / constant checks
    if y_all.size < MIN_SAMPLES:
        raise IdentificationError(
            f"only {y_all.size} samples: an ARX fit with an interval needs at least {MIN_SAMPLES} "
            "(more samples than parameters, with room for the order search)")
    ts0 = record.sample_time_s
    t0 = float(record.time_s[lo])

    def stage(q):
        """Decimate by q, split, centre, search orders, fit by least squares."""
        # -- decimation ----------------------------------------------------------------
        if q > 1:
            held = phase if (hold >= 2 and hold % q == 0) else None
            (y, u), skipped = decimate_signals([y_all, u_all], q, hold_phase=held)
            if y.size < 10:
                raise IdentificationError(
                    f"decimating by {q} leaves only {y.size} samples; use a smaller factor or decimate='off'")
        else:
            y, u, skipped = y_all, u_all, 0
        ts = ts0 * q
        t_start = t0 + skipped * ts0
        n = y.size

        # -- estimation / hold-out split and centring ---------------------------------
        n_hold = int(round(holdout * n))
        n_est = n - n_hold
        y_mean = float(np.mean(y[:n_est]))
        u_mean = None if u is None else float(np.mean(u[:n_est]))
        yc = y - y_mean
        uc = None if u is None else u - u_mean

        # -- orders and delay ------------------------------------------------------------
        table = ()
        if fixed_orders is None or (has_input and fixed_delay is None):
            if fixed_orders is None:
                na_values = range(1, max_order + 1)
                nb_values = range(1, max_order + 1) if has_input else [0]
            else:
                na_values, nb_values = [fixed_orders[0]], [fixed_orders[1]]
            delay_values = range(0, max_delay + 1) if fixed_delay is None else [fixed_delay]
            rows, _ = search_orders(yc, uc, na_values, nb_values, delay_values, criterion, stop=n_est)
            if not rows:
                raise IdentificationError(
                    f"no candidate model could be fitted to the {n_est} estimation samples; give a longer record")
            best = rows[0]
            na, nb, nk = best["na"], best["nb"], best["delay_samples"]
            table = tuple(rows)
        else:
            na, nb = fixed_orders
            nk = fixed_delay if has_input else 0

        # -- least-squares fit -----------------------------------------------------------
        ls = fit_arx(yc[:n_est], None if uc is None else uc[:n_est], na, nb, nk, ts, level, constant=True)
        return dict(q=q, y=y, u=u, yc=yc, uc=uc, y_mean=y_mean, u_mean=u_mean, n_est=n_est,
                    n_hold=n_hold, ts=ts, t_start=t_start, table=table, ls=ls, na=na, nb=nb, nk=nk)

    def iv_search(yc, uc, n_est, ts, ls):
        """Orders and/or delay by the criterion on IV simulation errors (see search_orders_iv).

        Orders auto: ``na = nb = 1..max_order`` at the least-squares delay; then, with the
        delay auto too, every delay ``0..max_delay`` at the best order; then the orders
        again at a changed delay.  Orders given: every delay at those orders.
        """
        from ._iv import search_orders_iv
        from ._regressors import max_lag

        top_n = max_order if fixed_orders is None else max(fixed_orders)
        start = max_lag(top_n, top_n, max_delay if fixed_delay is None else fixed_delay)
        all_delays = range(0, max_delay + 1) if fixed_delay is None else [fixed_delay]
        rows = {}

        def run(cands):
            got = search_orders_iv(yc, uc, cands, criterion, ts, start=start, stop=n_est)
            for r in got:
                rows[(r["na"], r["nb"], r["delay_samples"])] = r
            best = min(rows.values(), key=lambda r: (r[criterion], r["parameters"])) if rows else None
            return best

        nk = ls.delay_samples
        if fixed_orders is None:
            best = run([(n, n, nk) for n in range(1, max_order + 1)])
            if best is not None and fixed_delay is None:
                best = run([(best["na"], best["nb"], k) for k in all_delays])
                if best["delay_samples"] != nk:
                    best = run([(n, n, best["delay_samples"]) for n in range(1, max_order + 1)])
        else:
            best = run([(fixed_orders[0], fixed_orders[1], k) for k in all_delays])
        if best is None:  # no candidate could be refined: keep the least-squares choice
            return None, ls
        table = sorted(rows.values(), key=lambda r: (r[criterion], r["parameters"]))
        for i, r in enumerate(table):
            r["selected"] = i == 0
        new_ls = fit_arx(yc[:n_est], uc[:n_est], best["na"], best["nb"], best["delay_samples"], ts, level,
                         constant=True)
        return tuple(table), new_ls

    def refine_stage(st):
        """IV order/delay search (refine="iv" with orders or delay "auto"), the IV fit, the final model."""
        yc, uc, n_est, ts, nk = st["yc"], st["uc"], st["n_est"], st["ts"], st["nk"]
        ls, table = st["ls"], st["table"]
        if refine == "iv" and (fixed_orders is None or fixed_delay is None):
            iv_table, ls = iv_search(yc, uc, n_est, ts, ls)
            table = table if iv_table is None else iv_table
            nk = ls.delay_samples
        iv_fit = None
        if has_input:
            from ._iv import refine_iv

            try:
                iv_fit = refine_iv(ls, yc, uc, stop=n_est)
            except IdentificationError:
                if refine == "iv":
                    raise
        final = iv_fit if refine == "iv" else ls
        return dict(st, table=table, ls=ls, iv_fit=iv_fit, final=final, na=final.na, nb=final.nb, nk=nk)

    # -- decimation: fixed, or automatic in two passes ------------------------------
    f99 = None
    hold, phase = hold_period(u_all) if u_all is not None else (1, 0)

    def allowed(q, multiple_of=1):
        """The largest usable factor up to q (input held: a divisor of its clock)."""
        if q <= 1 or u_all is None:
            return max(int(q), 1)
        if hold >= 2:
            return largest_divisor(hold, q, multiple_of)
        return input_limited_factor(u_all, ts0, q, INPUT_POWER_ABOVE_BAND)

    if q_request == "auto":
        target, f99 = choose_factor(y_all, ts0)
        q_first = allowed(target)
        state = stage(q_first)
        q_more = refine_factor(state["ls"], state["ts"], y_all.size // q_first)
        if q_more > 1:
            q_total = allowed(q_first * q_more, q_first)
            if q_total > q_first:
                state = stage(q_total)
    else:
        state = stage(q_request)
    state = refine_stage(state)
    na, nb, nk = state["na"], state["nb"], state["nk"]
    if state["table"]:
        if fixed_orders is None and (na == max_order or (has_input and nb == max_order)):
            warnings.append(f"order at limit: the {criterion.upper()} search chose na = {na}, nb = {nb}, "
                            f"the largest searched (max_order = {max_order}); the record may need a higher order")
        if has_input and fixed_delay is None and nk == max_delay and max_delay > 0:
            warnings.append(f"delay at limit: the search chose a delay of {nk} samples, the largest searched "
                            f"(max_delay = {max_delay}); the true delay may be longer")
    held_input = has_input and hold >= 2 and hold % state["q"] == 0
    if state["q"] > 1 and has_input and not held_input:
        from ._decimate import power_fraction_above

        edge_hz = 0.8 * 0.5 / (ts0 * state["q"])
        share = power_fraction_above(u_all, ts0, edge_hz)
        if share > INPUT_POWER_ABOVE_BAND:
            warnings.append(
                f"decimated input: {100 * share:.0f} % of the input's power lies above the kept band "
                f"({edge_hz:.3g} Hz) after decimating by {state['q']}; the decimated data no longer follow the "
                "sampled plant exactly, so real poles and zeros may be biased (decimate='off', or a slower input)")
    q, y, u, yc, uc = state["q"], state["y"], state["u"], state["yc"], state["uc"]
    y_mean, u_mean, n_est, n_hold = state["y_mean"], state["u_mean"], state["n_est"], state["n_hold"]
    ts, t_start, table = state["ts"], state["t_start"], state["table"]
    ls, iv_fit, final, nk = state["ls"], state["iv_fit"], state["final"], state["nk"]

    from ._checks import assess

    return assess(record=record, out_ch=out_ch, in_ch=in_ch, ls=ls, iv_fit=iv_fit, final=final,
                  y=y, u=u, yc=yc, uc=uc, y_mean=y_mean, u_mean=u_mean, n_est=n_est, n_hold=n_hold,
                  ts=ts, t_start=t_start, q=q, f99=f99, table=table, warnings=warnings,
                  scan=lambda: order_scan(yc, uc, range(1, max_order + 1), nk, ts, stop=n_est),
                  settings={
                      "output": out_ch.name, "input": None if in_ch is None else in_ch.name,
                      "orders": "auto" if fixed_orders is None else list(fixed_orders),
                      "delay": "auto" if (has_input and fixed_delay is None) else nk,
                      "criterion": criterion, "confidence": level, "refine": refine,
                      "holdout": holdout, "decimate": q_request, "decimation_factor": q,
                      "decimation_method": (None if q == 1 else "subsampled on the input's hold clock"
                                            if held_input else "anti-alias filter"),
                      "power_bandwidth_hz": f99, "sample_time_s": ts, "record_sample_time_s": ts0,
                      "start_s": start_s, "end_s": end_s, "analysed_start_s": t_start,
                      "nan": nan, "max_order": max_order, "max_delay": max_delay,
                      "output_mean": y_mean, "input_mean": u_mean,
                      "output_unit": out_ch.unit, "input_unit": None if in_ch is None else in_ch.unit,
                  })
