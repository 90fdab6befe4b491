"""Ground truth for coupled oscillators: the Adler criterion and noise-free labelling."""
from __future__ import annotations

import math

import numpy as np

from ._common import _fail, check_ratio, check_real, check_vector

__all__ = ["adler_prediction", "phase_slips", "strobe_label"]

TWO_PI = 2.0 * math.pi


def adler_prediction(freqs, coupling, *, ratio=(1, 1)) -> dict:
    r"""Locking prediction for two sine-coupled phase oscillators (Adler equation).

    Parameters
    ----------
    freqs : (f_A, f_B)
        Natural frequencies in Hz.
    coupling : (2, 2) array_like
        ``coupling[i, j]`` = K_ij in rad/s, unit j acting on unit i (as in
        :func:`phase_oscillators`); only the off-diagonal entries are used.
    ratio : (p, q)
        A completes p cycles while B completes q; psi = q phi_A - p phi_B.

    Returns
    -------
    dict
        ``locked`` (bool), ``nu`` = |Delta| / S, ``detuning_rad_s`` Delta =
        q omega_A - p omega_B, ``coupling_sum_rad_s`` S = q K_AB + p K_BA,
        ``beat_frequency_hz`` (slip rate of psi, 0 when locked), ``locked_psi`` (the
        stable psi* = arcsin(Delta/S), or None), ``mean_plv`` (time-averaged
        |<exp(i psi)>| of the noise-free solution: 1 when locked, else
        nu - sqrt(nu^2 - 1)).

    Notes
    -----
    d psi/dt = Delta - S sin psi. For S > 0, psi locks iff |Delta| <= S; otherwise it
    slips with angular frequency sqrt(Delta^2 - S^2). For mutual 1:1 coupling of
    strength epsilon, S = 2 epsilon: |Delta omega| < 2 epsilon and beat frequency
    sqrt(Delta omega^2 - 4 epsilon^2).

    References
    ----------
    Adler R (1946) A study of locking phenomena in oscillators. Proc IRE 34:351-357.
    Pikovsky A, Rosenblum M, Kurths J (2001) Synchronization. CUP, sec. 3.1 and 7.1.

    Examples
    --------
    >>> out = adler_prediction((1.0, 1.0 + 1 / (2 * math.pi)), [[0, 0.25], [0.25, 0]])
    >>> out["locked"], round(out["beat_frequency_hz"] * 2 * math.pi, 6)  # sqrt(1 - 0.25)
    (False, 0.866025)
    """
    func = "adler_prediction"
    f = check_vector(freqs, 2, "freqs", func, positive=True)
    K = np.array(coupling, dtype=float)
    if K.shape != (2, 2) or not np.all(np.isfinite(K)):
        _fail(f"{func}: coupling must be a finite (2, 2) matrix, got {coupling!r}; pass "
              f"[[0, K_AB], [K_BA, 0]].")
    m = check_ratio(ratio, 2, func)
    g = math.gcd(int(m[0]), int(m[1]))
    p, q = int(m[0]) // g, int(m[1]) // g
    delta = TWO_PI * (q * f[0] - p * f[1])
    S = q * K[0, 1] + p * K[1, 0]
    ad = abs(delta)
    if S <= 0:
        locked = ad == 0.0
        nu = math.inf if ad > 0 else 0.0
    else:
        nu = ad / S
        locked = nu <= 1.0
    beat = 0.0 if locked else math.sqrt(max(delta * delta - max(S, 0.0) ** 2, 0.0)) / TWO_PI
    return {"locked": bool(locked), "nu": float(nu), "detuning_rad_s": float(delta),
            "coupling_sum_rad_s": float(S), "beat_frequency_hz": float(beat),
            "locked_psi": float(math.asin(delta / S)) if locked and S > 0 else None,
            "mean_plv": 1.0 if locked else (0.0 if not math.isfinite(nu)
                                            else float(nu - math.sqrt(nu * nu - 1.0))),
            "ratio": (p, q)}


def strobe_label(t, phase_a, phase_b, *, ratio, transient_cycles: float,
                 expected_cycles: float | None = None) -> dict:
    """Label a noise-free run as locked / not locked at ``ratio``.

    psi = q phi_A - p phi_B is sampled stroboscopically each time B completes a cycle
    (so B's waveform and any non-uniformity of its protophase do not enter). The run
    is labelled locked when, after ``transient_cycles`` cycles of B,

    * the sampled psi spans less than pi (no phase slip), and
    * A completes p/q cycles per cycle of B (rotation number within 1 %), and
    * B completed at least 80 % of ``expected_cycles`` (otherwise its angle did not
      rotate as a phase should, e.g. when strong coupling pushes a chaotic unit off its
      rotation centre, and no phase -- hence no locking -- is defined).

    Returns the label and the numbers behind it.
    """
    p, q = ratio
    phb = np.maximum.accumulate(phase_b)
    k0 = math.ceil((phb[0]) / TWO_PI + transient_cycles)
    k1 = math.floor(phb[-1] / TWO_PI)
    out = {"locked": False, "psi_span": math.nan, "n_cycles": max(k1 - k0, 0),
           "rotation_number": math.nan, "reason": ""}
    if k1 - k0 < 5 or (expected_cycles is not None and k1 - k0 < 0.8 * expected_cycles):
        out["reason"] = "phase of B did not complete the expected number of cycles"
        return out
    levels = TWO_PI * np.arange(k0, k1 + 1)
    tk = np.interp(levels, phb, t)
    pa = np.interp(tk, t, phase_a)
    psi = q * pa - p * levels
    span = float(psi.max() - psi.min())
    rot = float((pa[-1] - pa[0]) / (levels[-1] - levels[0]))
    rot_ok = abs(rot - p / q) <= 0.01 * p / q
    out.update(psi_span=span, rotation_number=rot, locked=bool(span < math.pi and rot_ok),
               reason="" if span < math.pi and rot_ok else
               ("phase slips" if not span < math.pi else "rotation number is not p/q"))
    return out


def _cycle_phase(phase):
    """Marker phase: 2 pi k at each completed cycle, linear in between (sample index).

    Returns the fractional sample indices of the cycle completions and their levels.
    The running maximum is used, so backward steps of a noisy protophase cannot create
    extra cycles.
    """
    rm = np.maximum.accumulate(phase)
    k0 = math.ceil(rm[0] / TWO_PI)
    k1 = math.floor(rm[-1] / TWO_PI)
    levels = TWO_PI * np.arange(k0, k1 + 1)
    idx = np.arange(rm.size, dtype=float)
    # first sample at which rm reaches each level, then interpolate inside that step
    j = np.searchsorted(rm, levels, side="left")
    j = np.clip(j, 1, rm.size - 1)
    lo, hi = rm[j - 1], rm[j]
    frac = np.where(hi > lo, (levels - lo) / np.where(hi > lo, hi - lo, 1.0), 1.0)
    return idx[j - 1] + np.clip(frac, 0.0, 1.0), levels


def phase_slips(phase_a, phase_b, *, ratio=(1, 1), hysteresis=0.5, per_cycle=True) -> int:
    """Number of phase slips of psi = q phi_A - p phi_B (true, unwrapped phases).

    Parameters
    ----------
    phase_a, phase_b : array_like, shape (n,)
        Unwrapped phases in radians (e.g. ``Simulation.phases``).
    ratio : (p, q)
        project convention.
    hysteresis : float
        Radians beyond +-pi (around the circular mean of psi) that psi must move before
        a slip is counted, so that noise at the boundary is not counted twice.
    per_cycle : bool
        If True (default), each phase is first replaced by its marker phase (2 pi k at
        each completed cycle, linear in between), which removes the within-cycle
        non-uniformity of protophases (van der Pol, FitzHugh-Nagumo, Roessler angles)
        that would otherwise make psi wobble across the slip threshold.

    Returns
    -------
    int
        Number of times psi moved a further 2 pi away from, or back towards, its
        preferred value (each full turn counts once).

    Examples
    --------
    >>> t = np.linspace(0, 10, 1001)
    >>> phase_slips(2 * np.pi * 1.3 * t, 2 * np.pi * 1.0 * t)  # 0.3 Hz beat over 10 s
    3
    """
    func = "phase_slips"
    a = np.asarray(phase_a, dtype=float)
    b = np.asarray(phase_b, dtype=float)
    if a.ndim != 1 or a.shape != b.shape or a.size < 2 or not (
            np.all(np.isfinite(a)) and np.all(np.isfinite(b))):
        _fail(f"{func}: phase_a and phase_b must be finite 1-D arrays of equal length "
              f">= 2, got shapes {a.shape} and {b.shape}; pass one phase series per unit.")
    m = check_ratio(ratio, 2, func)
    hysteresis = check_real(hysteresis, "hysteresis", func, low=0)
    if per_cycle:
        ia, la = _cycle_phase(a)
        ib, lb = _cycle_phase(b)
        if la.size < 2 or lb.size < 2:
            return 0
        lo, hi = max(ia[0], ib[0]), min(ia[-1], ib[-1])
        n = np.arange(math.ceil(lo), math.floor(hi) + 1, dtype=float)
        if n.size < 2:
            return 0
        a = np.interp(n, ia, la)
        b = np.interp(n, ib, lb)
    psi = m[1] * a - m[0] * b
    c = float(np.angle(np.mean(np.exp(1j * psi))))
    x = psi - c
    x = x - TWO_PI * np.round(x[0] / TWO_PI)
    k, slips = 0, 0
    up, down = math.pi + hysteresis, -math.pi - hysteresis
    for v in x.tolist():
        while v - TWO_PI * k > up:
            k += 1
            slips += 1
        while v - TWO_PI * k < down:
            k -= 1
            slips += 1
    return slips
