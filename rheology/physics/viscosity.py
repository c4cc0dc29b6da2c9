"""Effective viscosity and conversion of triaxial flow laws to tensor (invariant) form.

A laboratory law written for a triaxial test, edot_ax = A sigma_d^n (sigma_d = sigma1 -
sigma3), corresponds in a numerical model's second invariants tau_II = sqrt(tau_ij
tau_ij / 2) and edot_II = sqrt(edot_ij edot_ij / 2) to tau_II = sigma_d / sqrt(3) and
edot_II = (sqrt(3)/2) edot_ax (axisymmetric deformation, incompressible).
"""

from __future__ import annotations

import numpy as np


def effective_viscosity(stress, strain_rate):
    """Effective viscosity eta = tau_II / (2 edot_II) [Pa s] from triaxial quantities.

    Parameters
    ----------
    stress : array_like
        Differential stress sigma1 - sigma3 [Pa].
    strain_rate : array_like
        Axial strain rate [1/s].

    Notes
    -----
    With tau_II = sigma_d / sqrt(3) and edot_II = sqrt(3)/2 edot_ax,
    eta = sigma_d / (3 edot_ax), the Trouton relation for n = 1 (eta = 1/(3A)).

    References
    ----------
    Ranalli, G. (1995). *Rheology of the Earth*, 2nd ed., Chapman & Hall, ch. 4 (from
    memory); Gerya, T. (2019). *Introduction to Numerical Geodynamic Modelling*, 2nd ed.,
    Cambridge University Press, ch. 6 (from memory).
    """
    return np.asarray(stress, float) / (3.0 * np.asarray(strain_rate, float))


def invariant_prefactor(A, n):
    """Pre-factor A_II of edot_II = A_II tau_II^n for a triaxial law edot_ax = A sigma_d^n.

    .. math:: A_{II} = \\tfrac{1}{2}\\, 3^{(n+1)/2} A

    (units as A: Pa^-n s^-1 when A is in Pa^-n s^-1).
    """
    n = np.asarray(n, float)
    return 0.5 * 3.0 ** ((n + 1.0) / 2.0) * np.asarray(A, float)


def viscosity_factor(n):
    """F2 in eta = F2 A^(-1/n) edot_II^((1-n)/n) exp(H/(nRT)) for a triaxial law.

    .. math:: F_2 = 2^{(1-n)/n} / 3^{(n+1)/(2n)}

    1/3 for n = 1 (Trouton), 0.3029 for n = 3, 0.2992 for n = 4.
    """
    n = np.asarray(n, float)
    return 2.0 ** ((1.0 - n) / n) / 3.0 ** ((n + 1.0) / (2.0 * n))
