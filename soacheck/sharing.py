"""Current sharing between parallel devices, the electro-thermal loop gain and the whole set's stability.

References
----------
- V_BE = V_T ln(I_C/I_S), V_T = kT/q ≈ 25.7 mV at 25 °C: Sedra & Smith, *Microelectronic
  Circuits*, the diode and BJT chapters (from memory).
- Imbalance ΔI ≈ ΔV/(R_E + r_e) and the electro-thermal loop gain
  G = Rth·V_CE·|φ|/(R_E + r_e): elementary derivation.
"""

from __future__ import annotations

import math

import numpy as np

from soacheck.bipolar import THERMAL_VOLTAGE_V, VBE_TEMPCO_V_PER_K
from soacheck.mosfet import (
    TransferCurves,
    current_for_drive,
    gate_voltage_at,
    temperature_coefficient,
    transconductance,
)
from soacheck.wright_omega import wright_omega


def sharing_known(*, bipolar: bool, transfer: TransferCurves | None) -> bool:
    """Whether soacheck can tell how paralleled devices of one kind share a current.

    A bipolar part shares by its V_BE law (V_T ln(I/I_S) and its tempco); a FET or IGBT by its
    transfer curves, whose transconductance and α = ∂I_D/∂T_j set both the imbalance and the
    electro-thermal loop (Spirito, Breglio, d'Alessandro, Rinaldi, MIEL 2002). Without them
    neither is known: α changes sign at the zero-temperature-coefficient current, and the
    V_GS tempco below it is several times a V_BE's, so no default stands in for them.
    """
    return bipolar or transfer is not None


def share_current(
    total_a: np.ndarray,
    tj_c: np.ndarray,
    offsets_v: np.ndarray,
    *,
    ballast_ohm: float,
    bipolar: bool,
    tempco_v_per_k: float = VBE_TEMPCO_V_PER_K,
    start_a: np.ndarray | None = None,
    transfer: TransferCurves | None = None,
    junctions: int = 1,
    counts: np.ndarray | None = None,
) -> np.ndarray:
    """Split a total current between parallel devices with a common base (gate) drive.

    Each device k obeys V_B = u_k(I_k) + I_k·R_E + ΔV_k + φ·(Tj_k − 25 °C) with a common
    V_B, and Σ I_k = I_total. For a bipolar part u(I) = V_T ln(I / 1 A), so
    I_k = (V_T/R_E)·ω(ln(R_E/V_T) + x_k/V_T) with ω the Wright omega function. A FET's or
    IGBT's V_GS(I, T) comes from its transfer curves
    (:func:`~soacheck.mosfet.current_for_drive`): its transconductance and its α = ∂I_D/∂T
    replace the V_BE law and tempco. A FET or IGBT without them shares in a way nobody can
    tell (:func:`sharing_known`): the device lowest in the offset band (the first of those
    lowest, among rows standing for one device) is taken to carry the whole current and the
    others none, the conservative bound whatever the ballast. A Darlington (``junctions`` 2)
    has u = 2·V_T ln(I/1 A).
    V_B is found by Newton's method, vectorized over all samples. Devices with the same offset and temperature
    everywhere (all but one in a worst-case stage) are solved once and weighted by their
    number; ``start_a``, the currents of a nearby solution (the previous step of a fixed
    point), starts Newton from the base voltage they imply.

    Parameters
    ----------
    total_a
        Total current, shape ``(m,)``. [A]
    tj_c
        Junction temperature of each device, shape ``(n, m)``. [°C]
    offsets_v
        V_BE offset of each device, shape ``(n,)`` or ``(n, m)``. [V]
    ballast_ohm
        Emitter resistor of each device. [Ω]
    bipolar
        The device law, see above.
    start_a
        Currents of a nearby solution, shape ``(n, m)``, to start from; equal sharing when None. [A]
    transfer
        The FET's transfer characteristic, or None.
    junctions
        Base-emitter junctions in series (2 for a Darlington).
    counts
        How many alike devices each row stands for, shape ``(n,)``; one each when None.
        (A FET or IGBT without a transfer characteristic hands the whole current to a row
        standing for one device.)

    Returns
    -------
    numpy.ndarray, shape ``(n, m)``
        Current of each device (of each row's devices). [A]
    """
    total = np.asarray(total_a, dtype=float)
    rows_n = tj_c.shape[0]
    per_row = np.ones(rows_n) if counts is None else np.asarray(counts, dtype=float)
    n = float(per_row.sum())  # devices
    if rows_n == 1 and n == 1:
        return total[None, :].copy()
    by_curves = transfer is not None and not bipolar
    offsets = np.broadcast_to(np.asarray(offsets_v, dtype=float).reshape(rows_n, -1), tj_c.shape)
    if not sharing_known(bipolar=bipolar, transfer=transfer):
        # nothing tells how they share: the device lowest in the band takes it all (conservative)
        single = np.where((per_row == 1)[:, None] | (per_row != 1).all(), offsets, np.inf)
        out = np.zeros(tj_c.shape)
        out[np.argmin(single, axis=0), np.arange(tj_c.shape[1])] = total
        return out
    shift = offsets if by_curves else offsets + tempco_v_per_k * (tj_c - 25.0)  # (n, m)
    vt, r = junctions * THERMAL_VOLTAGE_V, ballast_ohm

    # identical devices (same offset and temperature at every sample) are one unknown, counted
    which, keep, _ = _groups(np.concatenate([shift, tj_c], axis=1) if by_curves else shift)
    shift = shift[keep]
    tj_kept = tj_c[keep]
    weight = np.bincount(which, weights=per_row)[:, None]

    def drive(i_a: np.ndarray, rows: np.ndarray | slice) -> np.ndarray:
        """The base (gate) voltage at which kept devices ``rows`` carry ``i_a``, less their shift."""
        if by_curves:
            return gate_voltage_at(i_a, tj_kept[rows], transfer) + i_a * r
        return i_a * r + vt * np.log(i_a)

    def currents(vb: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        x = vb[None, :] - shift
        if by_curves:
            return current_for_drive(x, tj_kept, transfer, source_ohm=r)
        if r > 0:
            i = (vt / r) * wright_omega(math.log(r / vt) + x / vt)
        else:
            i = np.exp(x / vt)
        return i, 1.0 / (r + vt / np.maximum(i, 1e-300))

    columns = np.arange(total.size)
    if start_a is None:  # equal sharing, at the first kept device's temperature
        each = np.maximum(total / n, 1e-12)
        vb = drive(each[None, :], slice(0, 1))[0] + (weight * shift).sum(axis=0) / n
    else:  # the base voltage of the device that carried the most, at its current and the new temperature
        k = np.argmax(np.asarray(start_a, dtype=float), axis=0)
        each = np.maximum(np.asarray(start_a, dtype=float)[k, columns], 1e-12)
        if by_curves:
            vb = gate_voltage_at(each, tj_kept[which[k], columns], transfer) + each * r + shift[which[k], columns]
        else:
            vb = drive(each, slice(None)) + shift[which[k], columns]
    for _ in range(100):
        i, slope = currents(vb)
        residual = (weight * i).sum(axis=0) - total
        if np.all(np.abs(residual) <= 1e-12 * np.maximum(total, 1.0)):
            return i[which]  # the currents at the base voltage that solved it, not evaluated again
        step = residual / np.maximum((weight * slope).sum(axis=0), 1e-300)
        vb = vb - np.clip(step, -0.5, 0.5)
    return currents(vb)[0][which]


def drive_slopes(
    current_a: np.ndarray,
    tj_c: np.ndarray,
    *,
    ballast_ohm: float,
    bipolar: bool,
    tempco_v_per_k: float = VBE_TEMPCO_V_PER_K,
    transfer: TransferCurves | None = None,
    junctions: int = 1,
) -> tuple[np.ndarray, np.ndarray]:
    """How each device's drive voltage V_B = u(I, T) + I·R_E moves with its current and temperature.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        r = ∂V_B/∂I at fixed T [Ω]: R_E + J·V_T/I for a bipolar part with J junctions, R_S + 1/g_m
        for a FET with transfer curves; and φ = ∂V_B/∂T at fixed I [V/K]: the V_BE tempco, or
        −α/g_m from the curves (α of :func:`~soacheck.mosfet.temperature_coefficient`, the
        datasheet's finite difference). Both with the shape of ``current_a``. A FET or IGBT
        without curves (:func:`sharing_known`): r = R_S and φ = 0, since the currents
        :func:`share_current` takes for it (one device carrying everything) do not move with
        temperature.
    """
    i = np.maximum(np.asarray(current_a, dtype=float), 1e-12)
    if transfer is not None and not bipolar:
        gm = transconductance(i, np.asarray(tj_c, dtype=float), transfer)
        return ballast_ohm + 1.0 / gm, -temperature_coefficient(i, transfer) / gm
    r = ballast_ohm + (junctions * THERMAL_VOLTAGE_V / i if bipolar else 0.0)
    return np.broadcast_to(r, i.shape), np.full(i.shape, tempco_v_per_k if bipolar else 0.0)


def loop_gain(
    current_a: np.ndarray,
    vce_v: np.ndarray,
    rth_k_per_w: float,
    *,
    ballast_ohm: float,
    bipolar: bool,
    tempco_v_per_k: float = VBE_TEMPCO_V_PER_K,
    transfer: TransferCurves | None = None,
    tj_c: np.ndarray | float = 25.0,
    junctions: int = 1,
) -> np.ndarray:
    """Electro-thermal loop gain G = −Rth·V_CE·φ/r of each device (elementary derivation).

    With r and φ of :func:`drive_slopes`: G = Rth·V_CE·|φ|/(R_E + r_e) for a bipolar part
    (r_e = V_T/I per junction), G = Rth·V_DS·α/(1 + g_m·R_S) for a FET with transfer curves
    (negative above the ZTC point, where the device cools itself back). G ≥ 1 means a device
    that warms takes more current faster than its ballast pushes it back. The exact
    condition for the whole set of devices is :func:`stability_gain`. A FET or IGBT without
    transfer curves: 0, as for a single device (its currents are taken, not solved; see
    :func:`share_current`).
    """
    if not sharing_known(bipolar=bipolar, transfer=transfer):
        return np.zeros(np.shape(current_a))
    r, phi = drive_slopes(
        current_a,
        np.broadcast_to(np.asarray(tj_c, dtype=float), np.shape(current_a)),
        ballast_ohm=ballast_ohm,
        bipolar=bipolar,
        tempco_v_per_k=tempco_v_per_k,
        transfer=transfer,
        junctions=junctions,
    )
    with np.errstate(divide="ignore", invalid="ignore"):
        return rth_k_per_w * np.maximum(vce_v, 0.0) * -phi / r


def stability_gain(
    current_a: np.ndarray,
    vce_v: np.ndarray,
    tj_c: np.ndarray,
    *,
    z_self_k_per_w: float,
    z_shared_k_per_w: float = 0.0,
    ballast_ohm: float,
    bipolar: bool,
    tempco_v_per_k: float = VBE_TEMPCO_V_PER_K,
    transfer: TransferCurves | None = None,
    junctions: int = 1,
    counts: np.ndarray | None = None,
) -> np.ndarray:
    """The largest real part of the eigenvalues of the electro-thermal fixed point's Jacobian, shape ``(m,)``.

    Parameters
    ----------
    current_a, vce_v, tj_c
        Each device's current, voltage and junction temperature at a shared state, ``(n, m)``.
    z_self_k_per_w
        Junction rise per watt of a device's own power (rth_jc + R_cs, or Zth for pulses). [K/W]
    z_shared_k_per_w
        Rise of every junction per watt of the total power (the shared heatsink). [K/W]
    counts
        How many alike devices each row stands for, ``(n,)``; one each when None.

    Notes
    -----
    With the total current held (Σ δI = 0) and a common drive, δI_l = (δV_B − φ_l δT_l)/r_l gives
    ∂I_l/∂T_j = (1/r_l)·[(φ_j/r_j)/Σ(1/r) − φ_l δ_lj]; with ∂P_l/∂I_l = V_l − I_l·R_E and
    δT = (z_self·1 + z_shared·11ᵀ)·δP, the Jacobian J = Z·diag(∂P/∂I)·∂I/∂T. The state is
    stable when every eigenvalue of J has a real part below 1 (the linearized thermal
    dynamics C·dδT/dt = (J − 1)·δT/Z for devices with the same thermal time constants;
    elementary derivation). For identical devices at an equal split the eigenvalue equals
    the per-device :func:`loop_gain`; at an unequal split it lies between the devices'
    gains, so a device's gain alone flags runaway too early. One device alone cannot
    redistribute a held current: 0.

    With a_l = g_l·∂P_l/∂I_l, c_j = φ_j g_j/Σg and d_l = a_l φ_l (g = 1/r), J = (z_self·a +
    z_shared·Σa)cᵀ − z_shared·1dᵀ − z_self·diag(d): a diagonal plus rank two. Devices alike
    at every point (all but Q1 in a worst-case stage) form groups: a difference between
    two devices of a group is an eigenvector with eigenvalue −z_self·d_b, and on vectors
    constant over each group J acts as the groups' reduced matrix
    J_ab = k_b·[(z_self·a_a + z_shared·Σa)c_b − z_shared·d_b] − δ_ab·z_self·d_a (k_b devices
    in group b), so only that small matrix is handed to the eigenvalue solver (elementary
    linear algebra).
    """
    eigenvalues = jacobian_eigenvalues(
        current_a,
        vce_v,
        tj_c,
        z_self_k_per_w=z_self_k_per_w,
        z_shared_k_per_w=z_shared_k_per_w,
        ballast_ohm=ballast_ohm,
        bipolar=bipolar,
        tempco_v_per_k=tempco_v_per_k,
        transfer=transfer,
        junctions=junctions,
        counts=counts,
    )
    return eigenvalues.real.max(axis=1)


def jacobian_eigenvalues(
    current_a: np.ndarray,
    vce_v: np.ndarray,
    tj_c: np.ndarray,
    *,
    z_self_k_per_w: float,
    z_shared_k_per_w: float = 0.0,
    ballast_ohm: float,
    bipolar: bool,
    tempco_v_per_k: float = VBE_TEMPCO_V_PER_K,
    transfer: TransferCurves | None = None,
    junctions: int = 1,
    counts: np.ndarray | None = None,
) -> np.ndarray:
    """The distinct eigenvalues of the electro-thermal Jacobian of :func:`stability_gain`, ``(m, k)``, complex.

    One per group of alike devices from the groups' reduced matrix, and one for the
    differences within each group of two or more (see :func:`stability_gain`, Notes); a
    single device: 0, and so a FET or IGBT without transfer curves (one device is taken to
    carry the current whatever the temperatures, see :func:`share_current`). The state is
    stable where every real part is below 1 (:func:`stability_gain`); the plain relaxation
    T ← f(T) converges to it only where every eigenvalue also lies inside the unit circle,
    which an eigenvalue ≤ −1 does not.
    """
    rows_n, m = current_a.shape
    per_row = np.ones(rows_n) if counts is None else np.asarray(counts, dtype=float)
    if per_row.sum() == 1 or not sharing_known(bipolar=bipolar, transfer=transfer):
        return np.zeros((m, 1), dtype=complex)
    r, phi = drive_slopes(
        current_a,
        tj_c,
        ballast_ohm=ballast_ohm,
        bipolar=bipolar,
        tempco_v_per_k=tempco_v_per_k,
        transfer=transfer,
        junctions=junctions,
    )
    g = 1.0 / np.maximum(r, 1e-12)  # (n, m)
    a = (np.maximum(vce_v, 0.0) - current_a * ballast_ohm) * g  # ∂P_l/∂I_l · g_l
    c = phi * g / (per_row[:, None] * g).sum(axis=0)  # (n, m)
    d = a * phi
    # devices with the same slopes and power slope at every point form a group, solved once (see Notes)
    which, keep, _ = _groups(np.concatenate([g, phi, a], axis=1))
    count = np.bincount(which, weights=per_row)
    a, c, d, k = a[keep], c[keep], d[keep], count[:, None]
    total = (k * a).sum(axis=0)  # Σ_l a_l over every device, (m,)
    rows = z_self_k_per_w * a + z_shared_k_per_w * total  # (groups, m)
    reduced = k[None, :, :] * (rows[:, None, :] * c[None, :, :] - z_shared_k_per_w * d[None, :, :])  # (a, b, m)
    groups = keep.size
    reduced[np.arange(groups), np.arange(groups), :] -= z_self_k_per_w * d
    eigenvalues = np.linalg.eigvals(np.moveaxis(reduced, 2, 0)).astype(complex)  # (m, groups)
    within = count > 1  # the differences between a group's devices: −z_self·d_b each
    return np.concatenate([eigenvalues, (-z_self_k_per_w * d[within]).T.astype(complex)], axis=1)


def _groups(rows: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Identical rows of ``rows`` ``(n, ...)``: each row's group, one row index per group, the group sizes.

    A loop over rows (devices, at most a few hundred), not samples.
    """
    seen: dict[bytes, int] = {}
    which = np.array([seen.setdefault(row.tobytes(), len(seen)) for row in rows])
    keep = np.unique(which, return_index=True)[1]
    return which, keep, np.bincount(which)
