"""Soil water properties: water content and relative conductivity as functions of pressure head.

Two published models, evaluated cell by cell with numpy (no loops over cells). ``psi`` is the
pressure head (m, negative above the water table); at ``psi >= 0`` the soil is saturated.

van Genuchten (1980) retention with Mualem (1976) relative conductivity, ``m = 1 - 1/n``,
``x = alpha |psi|``:

    Se = (1 + x^n)^-m
    theta = theta_r + (theta_s - theta_r) Se
    Kr = Se^(1/2) (1 - (1 - Se^(1/m))^m)^2 = Se^(1/2) (1 - x^(n-1) (1 + x^n)^-m)^2

(the last form is exact and avoids the cancellation of ``1 - Se^(1/m)`` near saturation).

The exponential model (Gardner 1958 for the conductivity; the water content of the same form, as
used by Srivastava & Yeh 1991 and Tracy 2006 for their analytic solutions):

    Se = Kr = exp(alpha psi)

Every function returns the values and their derivatives with respect to ``psi`` (Newton) and,
separately, with respect to ``alpha`` and ``n`` (calibration).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

VAN_GENUCHTEN = "van-genuchten"
EXPONENTIAL = "exponential"
MODELS = (VAN_GENUCHTEN, EXPONENTIAL)


@dataclass(frozen=True)
class Properties:
    """Soil water properties at given pressure heads (arrays of one shape).

    ``capacity`` is the specific moisture capacity d(theta)/d(psi) (1/m); ``dkr`` and
    ``dcapacity`` are d(Kr)/d(psi) and d(capacity)/d(psi).
    """

    se: np.ndarray
    theta: np.ndarray
    kr: np.ndarray
    capacity: np.ndarray
    dkr: np.ndarray
    dcapacity: np.ndarray


@dataclass(frozen=True)
class ParameterDerivatives:
    """d(theta)/d(alpha), d(Kr)/d(alpha) (m) and d(theta)/d(n), d(Kr)/d(n) (zero for the
    exponential model, which has no n)."""

    theta_alpha: np.ndarray
    kr_alpha: np.ndarray
    theta_n: np.ndarray
    kr_n: np.ndarray


def van_genuchten(psi: np.ndarray, alpha: np.ndarray | float, n: np.ndarray | float,
                  theta_r: np.ndarray | float, theta_s: np.ndarray | float) -> Properties:
    """van Genuchten (1980) / Mualem (1976) properties and their pressure-head derivatives.

    Parameters
    ----------
    psi
        Pressure head (m).
    alpha, n
        Shape parameters (1/m and -, n > 1).
    theta_r, theta_s
        Residual and saturated water content.

    Only the unsaturated points (``psi < 0``) are computed; the powers are taken through one
    logarithm and exponential each of ``x`` and ``1 + x^n``.
    """
    psi, alpha, n, theta_r, theta_s = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                                             (psi, alpha, n, theta_r, theta_s)))
    width = theta_s - theta_r
    se = np.ones(psi.shape)
    kr = np.ones(psi.shape)
    capacity = np.zeros(psi.shape)
    dkr = np.zeros(psi.shape)
    dcapacity = np.zeros(psi.shape)
    dry = psi < 0.0
    if dry.any():
        a_, n_ = alpha[dry], n[dry]
        m = 1.0 - 1.0 / n_
        x = -a_ * psi[dry]
        lnx = np.log(x)
        xn = np.exp(n_ * lnx)
        one = 1.0 + xn
        s_ = np.exp(-m * np.log(one))  # Se = (1 + x^n)^-m
        xnm2 = xn / (x * x)  # x^(n-2)
        a = xn / x * s_  # x^(n-1) Se = (1 - Se^(1/m))^m
        root = np.sqrt(s_)
        # derivatives with respect to x (x grows as psi falls: dx/dpsi = -alpha)
        p1 = s_ / one  # (1 + x^n)^(-m-1)
        dse_dx = -m * n_ * xnm2 * x * p1
        da_dx = (n_ - 1.0) * xnm2 * p1
        dkr_dx = 0.5 / root * dse_dx * (1.0 - a) ** 2 - 2.0 * root * (1.0 - a) * da_dx
        d2se_dx2 = -m * n_ * xnm2 * (p1 / one) * ((n_ - 1.0) * one - (m + 1.0) * n_ * xn)
        w = width[dry]
        se[dry] = s_
        kr[dry] = root * (1.0 - a) ** 2
        capacity[dry] = -w * a_ * dse_dx
        dkr[dry] = -a_ * dkr_dx
        dcapacity[dry] = w * a_ ** 2 * d2se_dx2
    return Properties(se=se, theta=theta_r + width * se, kr=kr, capacity=capacity, dkr=dkr, dcapacity=dcapacity)


def van_genuchten_parameter_derivatives(psi: np.ndarray, alpha: np.ndarray | float, n: np.ndarray | float,
                                        theta_r: np.ndarray | float,
                                        theta_s: np.ndarray | float) -> ParameterDerivatives:
    """Derivatives of theta and Kr with respect to ``alpha`` and ``n`` (van Genuchten / Mualem)."""
    psi, alpha, n, theta_r, theta_s = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                                             (psi, alpha, n, theta_r, theta_s)))
    m = 1.0 - 1.0 / n
    dry = psi < 0.0
    xs = np.where(dry, -alpha * psi, 1.0)
    xn = np.where(dry, xs ** n, 0.0)
    one = 1.0 + xn
    se = one ** -m
    a = np.where(dry, xs ** (n - 1.0) * se, 0.0)
    root = np.sqrt(se)
    # alpha enters only through x = alpha |psi|: d/dalpha = (x / alpha) d/dx
    xnm2 = np.where(dry, xs ** (n - 2.0), 0.0)
    dse_dx = -m * n * xnm2 * xs * one ** (-m - 1.0)
    da_dx = (n - 1.0) * xnm2 * one ** (-m - 1.0)
    dkr_dx = 0.5 / root * dse_dx * (1.0 - a) ** 2 - 2.0 * root * (1.0 - a) * da_dx
    x_over_alpha = np.where(dry, -psi, 0.0)
    # n enters through m = 1 - 1/n and the powers of x
    lnx = np.log(xs)
    frac = xn / one
    dlnse_dn = -np.log(one) / n ** 2 - m * frac * lnx
    dlna_dn = lnx + dlnse_dn
    dse_dn = se * dlnse_dn
    dkr_dn = 0.5 / root * dse_dn * (1.0 - a) ** 2 - 2.0 * root * (1.0 - a) * a * dlna_dn
    width = theta_s - theta_r
    return ParameterDerivatives(
        theta_alpha=np.where(dry, width * dse_dx * x_over_alpha, 0.0),
        kr_alpha=np.where(dry, dkr_dx * x_over_alpha, 0.0),
        theta_n=np.where(dry, width * dse_dn, 0.0),
        kr_n=np.where(dry, dkr_dn, 0.0),
    )


def exponential(psi: np.ndarray, alpha: np.ndarray | float, theta_r: np.ndarray | float,
                theta_s: np.ndarray | float) -> Properties:
    """Exponential model properties ``Se = Kr = exp(alpha psi)`` and their pressure-head derivatives."""
    psi, alpha, theta_r, theta_s = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                                        (psi, alpha, theta_r, theta_s)))
    dry = psi < 0.0
    e = np.exp(alpha * np.minimum(psi, 0.0))
    width = theta_s - theta_r
    return Properties(
        se=e,
        theta=theta_r + width * e,
        kr=e,
        capacity=np.where(dry, width * alpha * e, 0.0),
        dkr=np.where(dry, alpha * e, 0.0),
        dcapacity=np.where(dry, width * alpha ** 2 * e, 0.0),
    )


def exponential_parameter_derivatives(psi: np.ndarray, alpha: np.ndarray | float, theta_r: np.ndarray | float,
                                      theta_s: np.ndarray | float) -> ParameterDerivatives:
    """Derivatives of theta and Kr with respect to ``alpha`` (exponential model; zero for ``n``)."""
    psi, alpha, theta_r, theta_s = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                                        (psi, alpha, theta_r, theta_s)))
    p = np.minimum(psi, 0.0)
    de = p * np.exp(alpha * p)
    zero = np.zeros_like(p)
    return ParameterDerivatives(theta_alpha=(theta_s - theta_r) * de, kr_alpha=de, theta_n=zero, kr_n=zero)


@dataclass(frozen=True)
class SoilWater:
    """Per-cell soil water parameters of a section (arrays over the unknowns).

    ``van_genuchten`` marks the cells of the van Genuchten model; the others use the exponential
    model (their ``n`` is ignored).
    """

    van_genuchten: np.ndarray
    alpha: np.ndarray
    n: np.ndarray
    theta_r: np.ndarray
    theta_s: np.ndarray

    def properties(self, psi: np.ndarray) -> Properties:
        """Properties at the pressure heads ``psi`` of every cell."""
        vg = self.van_genuchten
        if vg.all():
            return van_genuchten(psi, self.alpha, self.n, self.theta_r, self.theta_s)
        if not vg.any():
            return exponential(psi, self.alpha, self.theta_r, self.theta_s)
        a = van_genuchten(psi[vg], self.alpha[vg], self.n[vg], self.theta_r[vg], self.theta_s[vg])
        ex = ~vg
        b = exponential(psi[ex], self.alpha[ex], self.theta_r[ex], self.theta_s[ex])
        return Properties(**{f: _merge(vg, getattr(a, f), getattr(b, f)) for f in Properties.__dataclass_fields__})

    def parameter_derivatives(self, psi: np.ndarray) -> ParameterDerivatives:
        """Derivatives of theta and Kr with respect to each cell's ``alpha`` and ``n``."""
        vg = self.van_genuchten
        a = van_genuchten_parameter_derivatives(psi[vg], self.alpha[vg], self.n[vg], self.theta_r[vg],
                                                self.theta_s[vg])
        ex = ~vg
        b = exponential_parameter_derivatives(psi[ex], self.alpha[ex], self.theta_r[ex], self.theta_s[ex])
        return ParameterDerivatives(**{f: _merge(vg, getattr(a, f), getattr(b, f))
                                       for f in ParameterDerivatives.__dataclass_fields__})


def _merge(mask: np.ndarray, on: np.ndarray, off: np.ndarray) -> np.ndarray:
    out = np.empty(mask.shape)
    out[mask] = on
    out[~mask] = off
    return out
