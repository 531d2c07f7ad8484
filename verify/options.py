"""The options of a check, validated in one place for the command line and the Python API.

`check_options` takes the options as given and returns them clean, or raises
:class:`~verify.errors.OptionError` naming the option, the value and its range.
`verify.service.CheckOptions` calls it when made, for the CLI, the API and the batch alike; the
CLI turns the error into exit status 2, the API lets it propagate. Nothing else range-checks
these options, so `review(rtol=5.0)` is refused exactly as `check --rtol 5.0` is.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from verify.compare.diagnose import SignMode
from verify.compare.tolerances import Tolerance
from verify.errors import OptionError, shown
from verify.units import Dimension, lookup_unit


@dataclass(frozen=True)
class CleanOptions:
    """The clean values of the options `check_options` range-checks."""

    sign: SignMode
    unit: str | None  # None: read from the table or inferred
    tolerance: Tolerance
    assume_equal_EA: float | None


def _fraction(name: str, value: object, *, low_open: bool, meaning: str) -> float:
    """A number in (0, 1) (low_open) or [0, 1); NaN, infinities and text are refused."""
    number = value if isinstance(value, (int, float)) and not isinstance(value, bool) else None
    if (
        number is None
        or not math.isfinite(number)
        or not (0 < number < 1 if low_open else 0 <= number < 1)
    ):
        interval = "(0, 1)" if low_open else "[0, 1)"
        raise OptionError(
            f"{name}={shown(value)}: {meaning} must be a number in {interval}, e.g. 0.01 for 1 %"
        )
    return float(number)


def check_assume_equal_ea(value: object, *, name: str = "assume_equal_EA") -> float | None:
    """None, or a positive finite axial stiffness."""
    if value is None:
        return None
    if (
        isinstance(value, bool)
        or not isinstance(value, (int, float))
        or not (math.isfinite(value) and value > 0)
    ):
        raise OptionError(
            f"{name}={shown(value)}: must be a positive number (an axial stiffness in the case's "
            "force unit)"
        )
    return float(value)


def check_options(
    *,
    sign: object = "auto",
    unit: object = None,
    rtol: object = Tolerance.rtol,
    atol_fraction: object = Tolerance.atol_fraction,
    assume_equal_EA: object = None,
    names: dict[str, str] | None = None,
) -> CleanOptions:
    """The options of a check, clean; OptionError on the first one out of range.

    `names` maps an option to the name the user typed (the CLI passes "--rtol" for "rtol").
    """
    said = {
        "sign": "sign",
        "unit": "unit",
        "rtol": "rtol",
        "atol_fraction": "atol_fraction",
        "assume_equal_EA": "assume_equal_EA",
        **(names or {}),
    }
    modes = [m.value for m in SignMode]
    if sign not in modes:
        raise OptionError(f"{said['sign']}={shown(sign)}: must be one of {', '.join(modes)}")
    clean_unit: str | None = None
    if unit not in (None, "auto"):
        try:
            clean_unit = str(unit)
            lookup_unit(clean_unit, Dimension.FORCE)
        except ValueError as exc:
            raise OptionError(f"{said['unit']}: {exc}") from None
    tolerance = Tolerance(
        rtol=_fraction(said["rtol"], rtol, low_open=True, meaning="the relative tolerance"),
        atol_fraction=_fraction(
            said["atol_fraction"],
            atol_fraction,
            low_open=False,
            meaning="the absolute tolerance (a fraction of the largest force)",
        ),
    )
    ea = check_assume_equal_ea(assume_equal_EA, name=said["assume_equal_EA"])
    return CleanOptions(SignMode(str(sign)), clean_unit, tolerance, ea)
