"""Levenberg–Marquardt on many starting points at once, within a box.

The solver (:mod:`placer.place.solve`) runs it from its Sobol starts and the
snapper (:mod:`placer.place.snap`) for the fine parts of every coarse
combination: one vectorised residual call per Jacobian column for every
start together.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

__all__ = ["batched_least_squares"]


def batched_least_squares(fun: Callable[[np.ndarray, np.ndarray], np.ndarray], U0: np.ndarray,
                          low: np.ndarray, high: np.ndarray, *, iterations: int = 60,
                          step: float = 1e-6, cost_tol: float = 1e-26, prune_after: int | None = None,
                          prune_cost: float | None = None) -> np.ndarray:
    """Levenberg–Marquardt on many starting points at once, within a box.

    Parameters
    ----------
    fun : callable
        ``fun(U, columns) -> R`` with U of shape (n, k) and R of shape
        (m, k); ``columns`` (length k) says which start each column of U
        belongs to, for functions that hold per-start data.
    U0 : ndarray, shape (n, batch)
    low, high : ndarray, shape (n,)
        Bounds; steps are projected onto the box.

    cost_tol : float
        A start stops once its sum of squared residuals is below this.
    prune_after, prune_cost : int and float, optional
        After `prune_after` iterations, stop working on starts whose cost
        is still above `prune_cost` (hopeless ones, in a discrete search).

    Returns
    -------
    ndarray, shape (n, batch)
        The improved points (each no worse than its start).
    """
    U = np.array(U0, dtype=float)
    n, batch = U.shape
    low = np.asarray(low, float)[:, None]
    high = np.asarray(high, float)[:, None]
    R = fun(U, np.arange(batch))
    cost = np.sum(R**2, axis=0)
    damping = np.full(batch, 1e-3)
    active = np.arange(batch)
    eye = np.eye(n)
    for iteration in range(iterations):
        keep = (cost[active] > cost_tol) & (damping[active] < 1e8)
        if prune_after is not None and iteration >= prune_after:
            keep &= cost[active] < prune_cost
        active = active[keep]
        if active.size == 0:
            break
        Ua, Ra, k = U[:, active], R[:, active], active.size
        # forward-difference Jacobian, every column of every start in one call
        shifted = Ua[:, None, :] + step * eye[:, :, None]
        Rs = fun(shifted.reshape(n, n * k), np.tile(active, n)).reshape(Ra.shape[0], n, k)
        J = (Rs - Ra[:, None, :]) / step                       # (m, n, k)
        JtJ = np.einsum("mik,mjk->kij", J, J)
        g = np.einsum("mik,mk->ki", J, Ra)
        diagonal = np.maximum(np.einsum("kii->ki", JtJ), 1e-12)
        A = JtJ + (damping[active, None] * diagonal)[:, :, None] * eye[None]
        try:
            delta = -np.linalg.solve(A, g[..., None])[..., 0].T  # (n, k)
        except np.linalg.LinAlgError:
            delta = -(np.linalg.pinv(A) @ g[..., None])[..., 0].T
        trial = np.clip(Ua + delta, low, high)
        Rt = fun(trial, active)
        trial_cost = np.sum(Rt**2, axis=0)
        better = trial_cost < cost[active]
        chosen = active[better]
        U[:, chosen] = trial[:, better]
        R[:, chosen] = Rt[:, better]
        cost[chosen] = trial_cost[better]
        damping[active] = np.clip(np.where(better, damping[active] * 0.3, damping[active] * 10.0), 1e-12, 1e8)
    return U
