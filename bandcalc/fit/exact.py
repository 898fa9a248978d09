"""The exact continuous solution: resistor values that place both switching points on target.

Damped Gauss-Newton with the minimum-norm step (Levenberg-Marquardt) over the general model,
in log ohms for resistors and volts for a reference, with the Jacobian from differences of the
model and values held inside their bounds (a value at a bound that the step would push out is
held there).  With more free values than two the solutions form a family; the minimum-norm step
converges to a member near the start.  Many starts are solved together in one model call.
"""

from __future__ import annotations

import numpy as np

from bandcalc.fit.grid_search import Evaluate

__all__ = ["solve"]


def solve(evaluate: Evaluate, log: np.ndarray, targets: tuple[float, float], starts: np.ndarray,
          low: np.ndarray, high: np.ndarray, tol: float) -> tuple[np.ndarray, np.ndarray]:
    """Values placing both switching points on their targets, from each start, within bounds.

    Parameters
    ----------
    evaluate : callable
        values (m, k) -> (upper, lower, current) from the model.
    log : numpy.ndarray of bool, shape (k,)
        Which values are resistances (solved in log ohms); the others (a reference, volts) are
        solved as they are.
    targets : (float, float)
        Upper and lower switching point, volts.
    starts : numpy.ndarray, shape (m, k)
        Starting values, one row per start; all are solved together.
    low, high : numpy.ndarray, shape (k,)
        Bounds per value.
    tol : float
        Volts: the search stops once a start has both errors well below this.

    Returns
    -------
    values, worst : numpy.ndarray
        The values each start reached, and the larger of its two errors (volts).
    """
    to_z = lambda v: np.where(log, np.log(np.where(log, v, 1.0)), v)  # noqa: E731
    to_v = lambda z: np.where(log, np.exp(np.where(log, z, 0.0)), z)  # noqa: E731 - exp of log ohms only
    z_lo, z_hi = to_z(low), to_z(high)
    m, k = starts.shape

    def residual(z: np.ndarray) -> np.ndarray:
        u, l, _ = evaluate(to_v(z).reshape(-1, k))  # noqa: E741
        return np.stack([u - targets[0], l - targets[1]], axis=-1).reshape(*z.shape[:-1], 2)

    z = np.clip(to_z(starts), z_lo, z_hi)
    f = residual(z)
    damping = np.full(m, 1e-3)
    h = np.where(log, 1e-6, 1e-6 * np.maximum(1.0, np.abs(z)))
    better = np.ones(m, dtype=bool)
    for _ in range(100):
        worst = np.max(np.abs(f), axis=1)
        # Polish well below the acceptance level, while steps still help.
        if np.any(worst <= 1e-3 * tol) or (np.any(worst <= tol) and not better.any()):
            break
        shifted = residual(z[:, None, :] + np.eye(k)[None] * h[:, None, :])  # (m, k, 2)
        jac = np.swapaxes((shifted - f[:, None, :]) / h[:, :, None], 1, 2)  # (m, 2, k)
        grad = np.einsum("mik,mi->mk", jac, f)
        stuck = ((z <= z_lo) & (grad > 0)) | ((z >= z_hi) & (grad < 0))
        jac = np.where(stuck[:, None, :], 0.0, jac)
        jjt = jac @ np.swapaxes(jac, 1, 2)
        size = np.trace(jjt, axis1=1, axis2=2) / 2 + 1e-300
        step = -np.einsum("mik,mi->mk", jac, np.linalg.solve(
            jjt + (damping * size)[:, None, None] * np.eye(2), f[..., None])[..., 0])
        z_new = np.clip(z + step, z_lo, z_hi)
        f_new = residual(z_new)
        better = np.linalg.norm(f_new, axis=1) < np.linalg.norm(f, axis=1)
        z, f = np.where(better[:, None], z_new, z), np.where(better[:, None], f_new, f)
        damping = np.clip(np.where(better, damping / 4, damping * 8), 1e-12, 1e12)
    return to_v(z), np.max(np.abs(f), axis=1)
