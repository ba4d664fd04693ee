"""The named columns of the compiled march's per-side parameters.

``INT_COLUMNS`` and ``REAL_COLUMNS`` list the columns of the ``ints`` and ``reals``
arrays of ``ibl.kernel.march_sides`` in order (``ibl.march`` builds each row from a
mapping by these names).  The compiled code cannot read a dictionary, but module-level
integers are compile-time constants to numba: the ``I_*`` and ``R_*`` constants below are
the column positions, taken from the tuples, and the kernel reads ``ints[k, I_CRITERION]``
rather than a bare column number.

numba caches compiled code per source file: after reordering or adding a column, delete
``ibl/__pycache__/*.nbi`` and ``*.nbc`` (the cached kernel keeps the old positions).
"""

from __future__ import annotations

__all__ = ["INT_COLUMNS", "REAL_COLUMNS"]

#: The integer parameters of a side, in column order.
INT_COLUMNS = (
    "start",
    "criterion",
    "closure",
    "skin_friction",
    "axisymmetric",
    "turbulent_method",
    "laminar_method",
)
#: The real parameters of a side, in column order.
REAL_COLUMNS = (
    "nu",
    "stagnation_slope",
    "inflow_theta",
    "inflow_shape_factor",
    "trip",
    "tu_percent",
    "separation_lambda",
    "initial_shape_factor",
    "separation_shape_factor",
    "supplied_laminar_separation",
)

# Column positions in ``ints``: start kind (``kernel.START_*``), transition criterion
# (``kernel.CRITERION_CODES``), Thwaites closure (``kernel.CLOSURE_CODES``), skin-friction
# law (``turbulent.SKIN_FRICTION``), axisymmetric flag, turbulent method code and
# laminar method code (``ibl.methods``).
I_START = INT_COLUMNS.index("start")
I_CRITERION = INT_COLUMNS.index("criterion")
I_CLOSURE = INT_COLUMNS.index("closure")
I_SKIN_FRICTION = INT_COLUMNS.index("skin_friction")
I_AXISYMMETRIC = INT_COLUMNS.index("axisymmetric")
I_TURBULENT_METHOD = INT_COLUMNS.index("turbulent_method")
I_LAMINAR_METHOD = INT_COLUMNS.index("laminar_method")

# Column positions in ``reals``: nu/U_inf, stagnation slope dUe/ds, inflow theta and H,
# trip position (inf for none), Tu [%], separation lambda, initial H and separation H of
# the turbulent march, supplied laminar separation s (NaN or inf for none).
R_NU = REAL_COLUMNS.index("nu")
R_STAGNATION_SLOPE = REAL_COLUMNS.index("stagnation_slope")
R_INFLOW_THETA = REAL_COLUMNS.index("inflow_theta")
R_INFLOW_SHAPE_FACTOR = REAL_COLUMNS.index("inflow_shape_factor")
R_TRIP = REAL_COLUMNS.index("trip")
R_TU_PERCENT = REAL_COLUMNS.index("tu_percent")
R_SEPARATION_LAMBDA = REAL_COLUMNS.index("separation_lambda")
R_INITIAL_SHAPE_FACTOR = REAL_COLUMNS.index("initial_shape_factor")
R_SEPARATION_SHAPE_FACTOR = REAL_COLUMNS.index("separation_shape_factor")
R_SUPPLIED_LAMINAR_SEPARATION = REAL_COLUMNS.index("supplied_laminar_separation")
