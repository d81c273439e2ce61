"""Shapes and argument checks shared by the finance methods (flows (years,) or (cases, years); rates)."""

from __future__ import annotations

import numpy as np

_WHEN = {"end": 0, "begin": 1, 0: 0, 1: 1}


def _flows_2d(flows, name: str = "flows") -> tuple[np.ndarray, bool]:
    """Return flows as a float (cases, years) array and whether input was 1-D."""
    arr = np.asarray(flows, dtype=float)
    if arr.ndim == 1:
        return arr[np.newaxis, :], True
    if arr.ndim == 2:
        return arr, False
    raise ValueError(
        f"{name} must be shaped (years,) or (cases, years), got {arr.ndim} dimensions"
    )


def _rates(rate, cases: int | None, name: str = "rate") -> np.ndarray:
    """Return a rate as a float array broadcastable against (cases,).

    ``cases`` is None for a single flow row: any number of rates is then
    allowed, one result per rate.
    """
    arr = np.asarray(rate, dtype=float)
    if arr.ndim > 1 or (arr.ndim == 1 and cases is not None and arr.shape[0] not in (1, cases)):
        raise ValueError(
            f"{name} must be a scalar or shaped (cases,) = ({cases},), got shape {arr.shape}"
        )
    return arr


def _ufunc_like(result: np.ndarray, *args):
    """Python float when every argument is a scalar, else the array."""
    if all(np.ndim(a) == 0 for a in args):
        return float(result)
    return result


def _when_code(when):
    if isinstance(when, str) or np.ndim(when) == 0:
        try:
            return _WHEN[when if isinstance(when, str) else int(when)]
        except (KeyError, TypeError, ValueError):
            raise ValueError(f"when must be 'end' (0) or 'begin' (1), got {when!r}") from None
    codes = np.asarray([_when_code(w) for w in np.ravel(when)])
    return codes.reshape(np.shape(when))


# ---------------------------------------------------------------------------
# discounting
# ---------------------------------------------------------------------------
