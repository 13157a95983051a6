"""plumbfit: one-pass, mergeable straight-line fits on NumPy arrays.

Every number is computed by the Rust core; this package only converts
arguments and maps errors.

>>> import numpy as np
>>> import plumbfit
>>> acc = plumbfit.LineAccumulator()
>>> acc.extend(np.array([0.0, 1.0, 2.0, 3.0]), np.array([0.1, 2.1, 3.9, 6.1]))
>>> fit = acc.fit()
>>> round(fit.slope, 6), round(fit.intercept, 6)
(1.98, 0.08)
>>> acc.push(float("nan"), 1.0)
Traceback (most recent call last):
...
plumbfit.NonFiniteError: non-finite value at index 0

Inputs: 1-D C-contiguous float64 arrays are read in place; lists, integer
arrays and strided views are converted to float64 once. Large inputs are
processed with the GIL released.

Scale-out over Dask (lines and p-parameter models, over dask arrays or
dask dataframe columns): see :mod:`plumbfit.dask` (needs ``dask[array]``).
"""

from ._native import (
    AndersonDarlingTest,
    AnovaTable,
    CalibratedValue,
    DecisionLimits,
    EmptyInputError,
    GIL_RELEASE_PAIRS,
    INFLUENCE_FLAGS,
    Interval,
    InvalidInputError,
    InvalidWeightError,
    InverseResult,
    LackOfFitTest,
    LengthMismatchError,
    LineAccumulator,
    LineFit,
    ModelAccumulator,
    ModelFit,
    NoSpreadError,
    NonFiniteError,
    NumericalError,
    PlumbfitError,
    QuadraticCheck,
    RankDeficientError,
    ReplicateLevels,
    ResidualChecks,
    RetainedResiduals,
    ShapiroWilkTest,
    SigmaLimits,
    StateFormatError,
    StateOverflowError,
    TooFewPointsError,
    __version__,
    anderson_darling,
    fit_polynomial,
    load_state,
    peek_state,
    shapiro_wilk,
)

__all__ = [
    "AndersonDarlingTest",
    "AnovaTable",
    "CalibratedValue",
    "DecisionLimits",
    "EmptyInputError",
    "GIL_RELEASE_PAIRS",
    "INFLUENCE_FLAGS",
    "Interval",
    "InvalidInputError",
    "InvalidWeightError",
    "InverseResult",
    "LackOfFitTest",
    "LengthMismatchError",
    "LineAccumulator",
    "LineFit",
    "ModelAccumulator",
    "ModelFit",
    "NoSpreadError",
    "NonFiniteError",
    "NumericalError",
    "PlumbfitError",
    "QuadraticCheck",
    "RankDeficientError",
    "ReplicateLevels",
    "ResidualChecks",
    "RetainedResiduals",
    "ShapiroWilkTest",
    "SigmaLimits",
    "StateFormatError",
    "StateOverflowError",
    "TooFewPointsError",
    "__version__",
    "anderson_darling",
    "fit_polynomial",
    "load_state",
    "peek_state",
    "shapiro_wilk",
]
