r"""The radical ``R^{1/2}`` of a band structure: the one branch used by every package.

Definition
----------
For ends ``e_1 < e_2 < … < e_{2k}`` (bands ``[e_1, e_2], [e_3, e_4], …``;
hard and soft ends alike) let ``R(z) = ∏_i (z - e_i)``.  On the first sheet

    R^{1/2}(z) = ∏_i (z - e_i)^{1/2}        (principal square roots),

which is analytic in ``C`` minus the bands, ``~ z^k`` at infinity (each factor
``~ z^{1/2}``), and satisfies ``R^{1/2}(z̄) = conj R^{1/2}(z)`` off the real
axis.  The product of principal roots has its cuts exactly on the bands: on a
gap an even number of factors have their argument on the negative axis, so
their jumps cancel.

Real points
-----------
A point ``x`` with zero imaginary part, **whatever the sign of that zero**
(``+0.0`` or ``-0.0``), gets the boundary value from the upper half-plane,
``R^{1/2}_+(x) = lim_{ε↓0} R^{1/2}(x + iε)``.  The sign of a zero is not read
as a side: numpy's ``sqrt`` would take ``x - 0j`` from below, and a conjugate
``conj(x + 0j)`` or a subtraction would then flip the branch on a band without
anyone asking for it.  Real-valued (float) input is accepted and treated the
same way.  The value from below on a band is ``R^{1/2}_- = -R^{1/2}_+``; in a gap
and outside the hull the two agree.

With ``|R(x)|^{1/2}`` the positive root, the values are (``k`` bands, bands
numbered ``j = 1..k``)::

    x > e_{2k}:                    +|R(x)|^{1/2}
    gap j   (b_j < x < a_{j+1}):   (-1)^{k-j} |R(x)|^{1/2}
    band j  (a_j < x < b_j):       i (-1)^{k-j} |R(x)|^{1/2}     (from above)
    x < e_1:                       (-1)^k |R(x)|^{1/2}

(each factor ``(x - e)^{1/2}_+`` is ``|x - e|^{1/2}`` right of ``e`` and
``i|x - e|^{1/2}`` left of it; count the factors left of ``x``.)  At an end the
value is 0.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["sqrt_R"]


def sqrt_R(z: ArrayLike, ends: ArrayLike) -> np.ndarray:
    r"""``R^{1/2}(z) = ∏_i (z - e_i)^{1/2}``, first sheet, values from above on the real axis.

    Parameters
    ----------
    z : points (real or complex, any shape).  A zero imaginary part (``+0.0``
        or ``-0.0``) means the boundary value from above (module docstring).
    ends : the ends ``e_1 < … < e_{2k}`` of the bands.

    Returns
    -------
    Complex array of the shape of ``z``.
    """
    # + 0.0j turns an imaginary part -0.0 into +0.0 (IEEE: -0.0 + 0.0 = +0.0) and changes
    # nothing else, so real points get the value from above at the cost of one addition
    z = np.asarray(z, dtype=complex) + 0.0j
    out = np.ones(z.shape, dtype=complex)
    for e in ends:
        out = out * np.sqrt(z - e)
    return out
