"""Reference functions with known sensitivity indices.

They ship with the sensitivity code so that its pipeline can be checked
end to end against closed forms (tests/test_sensitivity.py).
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["ishigami", "ishigami_indices", "ISHIGAMI_NAMES", "ISHIGAMI_S1", "ISHIGAMI_ST", "ISHIGAMI_S2"]

ISHIGAMI_NAMES = ("x1", "x2", "x3")

#: Published analytic indices of the Ishigami function for a = 7, b = 0.1
#: with x1, x2, x3 independent and uniform on [-pi, pi], to four decimals
#: (Ishigami & Homma 1990; Sobol' & Levitan 1999; the first-order values
#: also appear in the SALib ``test_functions.Ishigami`` docstring, which
#: cites Saltelli et al. 2008). :func:`ishigami_indices` computes them from
#: the closed forms.
ISHIGAMI_S1 = {"x1": 0.3139, "x2": 0.4424, "x3": 0.0}
ISHIGAMI_ST = {"x1": 0.5576, "x2": 0.4424, "x3": 0.2437}
#: Second-order (pair) indices: only x1 and x3 interact.
ISHIGAMI_S2 = {("x1", "x2"): 0.0, ("x1", "x3"): 0.2437, ("x2", "x3"): 0.0}


def ishigami(x1, x2, x3, a=7.0, b=0.1):
    r"""Ishigami function, a non-additive, non-monotonic benchmark.

    .. math:: f = \sin x_1 + a \sin^2 x_2 + b\, x_3^4 \sin x_1

    Parameters
    ----------
    x1, x2, x3 : array_like
        Inputs, in the benchmark uniform on [-pi, pi]; broadcast together.
        [rad]
    a : float, optional
        Weight of the x2 term. [-]
    b : float, optional
        Weight of the x1-x3 interaction. [rad^-4]

    Returns
    -------
    numpy.ndarray or float
        f, same shape as the broadcast inputs. [-]

    References
    ----------
    .. [1] Ishigami, T., Homma, T. (1990). An importance quantification
       technique in uncertainty analysis for computer models. Proceedings of
       the First International Symposium on Uncertainty Modeling and
       Analysis (ISUMA '90), 398-403. doi:10.1109/ISUMA.1990.151285
    """
    x1, x2, x3 = (np.asarray(x, dtype=float) for x in (x1, x2, x3))
    sin_x1 = np.sin(x1)
    return sin_x1 + a * np.sin(x2) ** 2 + b * x3 ** 4 * sin_x1


def ishigami_indices(a=7.0, b=0.1):
    r"""Analytic Sobol' indices of :func:`ishigami` on [-pi, pi]^3.

    With independent uniform inputs the variance splits as

    .. math::
        V_1 = \tfrac12 \left(1 + \tfrac{b \pi^4}{5}\right)^2, \quad
        V_2 = \tfrac{a^2}{8}, \quad V_3 = 0, \quad
        V_{13} = b^2 \pi^8 \left(\tfrac{1}{18} - \tfrac{1}{50}\right)
               = \tfrac{8 b^2 \pi^8}{225},

    :math:`V = V_1 + V_2 + V_{13}`, and the indices are
    :math:`S_i = V_i / V`, :math:`S_{T1} = (V_1 + V_{13}) / V`,
    :math:`S_{T2} = V_2 / V`, :math:`S_{T3} = V_{13} / V`.

    The closed forms are written from memory of [1]_ and [2]_ (the
    moments used: E sin^2 = 1/2 and E x^4 = pi^4/5, E x^8 = pi^8/9 for x
    uniform on [-pi, pi]); that they reproduce the published four-decimal
    values in :data:`ISHIGAMI_S1` and :data:`ISHIGAMI_ST` is checked in
    tests/test_sensitivity.py.

    Parameters
    ----------
    a : float, optional
        Weight of the x2 term. [-]
    b : float, optional
        Weight of the x1-x3 interaction. [rad^-4]

    Returns
    -------
    dict
        ``"S1"`` and ``"ST"``: dicts by input name; ``"S2"``: dict by name
        pair; ``"variance"``: total variance V of f. [-]

    References
    ----------
    .. [1] Ishigami, T., Homma, T. (1990). An importance quantification
       technique in uncertainty analysis for computer models. ISUMA '90.
    .. [2] Sobol', I. M., Levitan, Yu. L. (1999). On the use of variance
       reducing multipliers in Monte Carlo computations of a global
       sensitivity index. Computer Physics Communications 117(1-2), 52-61.
    """
    pi4 = math.pi ** 4
    pi8 = math.pi ** 8
    v1 = 0.5 * (1.0 + b * pi4 / 5.0) ** 2
    v2 = a ** 2 / 8.0
    v13 = b ** 2 * pi8 * (1.0 / 18.0 - 1.0 / 50.0)
    total = v1 + v2 + v13
    return {
        "S1": {"x1": v1 / total, "x2": v2 / total, "x3": 0.0},
        "ST": {"x1": (v1 + v13) / total, "x2": v2 / total, "x3": v13 / total},
        "S2": {("x1", "x2"): 0.0, ("x1", "x3"): v13 / total, ("x2", "x3"): 0.0},
        "variance": total,
    }
