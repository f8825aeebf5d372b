"""Column layout of the compiled stepper's per-part parameter matrix (no numba import).

:func:`partsel.physics.simulate.part_matrix` fills the matrix, :mod:`partsel.physics.stepper`
reads it and :mod:`partsel.physics.spice` writes the same constants into a deck; keeping the
layout here lets the closed form and the deck writer run without loading numba.
"""

from __future__ import annotations

# Column order of the per-part parameter matrix (see simulate.part_matrix).
(
    P_TOPO,
    P_I_STAGE,
    P_I_SRC0,
    P_I_SNK0,
    P_LIM_SRC,
    P_LIM_SNK,
    P_DB,
    P_VS_SRC,  # stored as 1 / V_S
    P_VS_SNK,  # stored as 1 / V_K
    P_K_E,
    P_INV_BETA_D,
    P_WT,
    P_SR0,
    P_GAMMA,
    P_GAMMA_CM,
    P_A,
    P_B0,
    P_PD_CONST,
    P_PD_SLOPE,
    P_G_S,
    P_I_S,
    P_DRIVE_LO,
    P_DRIVE_HI,
    P_V_CAP0,
    P_H_FAR_POS,
    P_H_FAR_NEG,
    P_X0,
    P_Y0,
    N_PARAMS,
) = range(29)

#: Topology codes of the stepper: biased pair (class AB / CMOS), Darlington source with
#: pull-down and sink device (class B), Darlington source with pull-down only (class A).
T_BIASED, T_CLASS_B, T_CLASS_A = 0, 1, 2
