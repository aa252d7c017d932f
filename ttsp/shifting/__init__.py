"""Automatic horizontal (and vertical) shift factors by one joint fit of all isotherms."""

from .shift import (GAP_MODES, MAX_DECADES_PER_ISOTHERM, MAX_FIT_POINTS_PER_ISOTHERM,
                    NOISE_RATIO_TRUSTED, OUTLIER_THRESHOLD, STDERR_METHOD, UNDETERMINED_STDERR,
                    USED_STDERR_CAP, VERTICAL_MODES, VERTICAL_SIGN, ShiftResult,
                    default_reference_temperature_K, shift_isotherms)

__all__ = ["ShiftResult", "shift_isotherms", "default_reference_temperature_K",
           "VERTICAL_MODES", "GAP_MODES", "VERTICAL_SIGN", "UNDETERMINED_STDERR",
           "USED_STDERR_CAP", "MAX_FIT_POINTS_PER_ISOTHERM", "MAX_DECADES_PER_ISOTHERM",
           "OUTLIER_THRESHOLD", "NOISE_RATIO_TRUSTED", "STDERR_METHOD"]
