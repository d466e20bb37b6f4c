"""The Eckart tunnelling correction by scipy.integrate.quad of the published transmission: the reference of
the Eckart checks, independent of qcthermo.kinetics (another form of P(E), another integrator)."""

from __future__ import annotations

import itertools

import numpy as np
from scipy import constants
from scipy.integrate import quad

#: h c x 1 cm^-1 in hartree (CODATA through scipy.constants)
WAVENUMBER_HARTREE = constants.h * constants.c * 100 / constants.physical_constants["Hartree energy"][0]


def eckart_kappa_by_quad(v1, v2, nu_cm, t):
    """Eckart kappa, e^(V1/kT)/kT integral of P(E) e^(-E/kT) dE, by scipy.integrate.quad in plain floats.

    Eckart, Phys. Rev. 1930, 35, 1303; Johnston and Heicklen, J. Phys. Chem. 1962, 66, 532:
    P = 1 - [cosh 2pi(a-b) + cosh 2pi d] / [cosh 2pi(a+b) + cosh 2pi d], with a = l sqrt(2mE)/hbar,
    b = l sqrt(2m(E - A))/hbar, d = sqrt(2 m B l^2 / hbar^2 - 1/4), A = V1 - V2, sqrt B = sqrt V1 + sqrt V2,
    and m l^2 from the barrier-top curvature: m omega^2 = (B^2 - A^2)^2 / (8 B^3 l^2). Atomic units.
    The numerator is taken as 2 sinh 2pi a sinh 2pi b (cosh(x+y) - cosh(x-y) = 2 sinh x sinh y): the 1 - ratio
    form keeps no digit where P < 1e-16, which deep tunnelling through a high barrier samples (HCN -> HNC at
    250 K: 0.3 % off). Valid while 2pi(a+b) < 710 (cosh in float range).
    """
    hw = abs(nu_cm) * WAVENUMBER_HARTREE
    a_, b_ = v1 - v2, (np.sqrt(v1) + np.sqrt(v2)) ** 2
    ml2 = (b_**2 - a_**2) ** 2 / (8 * b_**3 * hw**2)  # m l^2 / hbar^2 in 1/hartree
    d = np.sqrt(complex(2 * ml2 * b_ - 0.25))

    def p(e):
        a, b = np.sqrt(2 * ml2 * e), np.sqrt(2 * ml2 * (e - a_))
        cd = np.cosh(2 * np.pi * d).real
        return 2 * np.sinh(2 * np.pi * a) * np.sinh(2 * np.pi * b) / (np.cosh(2 * np.pi * (a + b)) + cd)

    kt = constants.k * t / constants.physical_constants["Hartree energy"][0]
    e0 = max(0.0, a_)

    def f(e):
        return p(e) * np.exp(-(e - v1) / kt) / kt

    edges = np.linspace(e0, v1 + 60 * kt, 201)  # short pieces: quad alone misses the narrow peak at low T
    return sum(quad(f, lo, hi, limit=200, epsabs=0, epsrel=1e-12)[0] for lo, hi in itertools.pairwise(edges))
