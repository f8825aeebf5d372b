"""Column layout of the compiled stepper's per-part parameter matrix (no numba import).

:func:`partsel.physics.simulate.part_matrix` fills the matrix, :mod:`partsel.physics.stepper`
reads it and :mod:`partsel.physics.spice` writes the same constants into a deck; keeping the
layout here lets the closed form and the deck writer run without loading numba.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Callable
from pathlib import Path

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

#: A part is given up (its record NaN, simulate() reports why; the closed form stands) when
#: more than this share of one period's steps fail their output-node solve even after the
#: retry, or as soon as its state is no longer finite. This bounds the work of the hopeless
#: cases (a step far longer than the loop's time constants: a signal period of days against a
#: MHz loop; a class-A stage with a GBW of 1e12 Hz) to about one period, while a part that
#: misses the tolerance at part of its period (at a swing limit while it clips) keeps its
#: waveform and is counted in ``SimResult.bad_steps``.
MAX_BAD_SHARE = 0.5
# (Passed to the stepper as an argument: numba's cache keys on stepper.py's source alone, so a
# constant read from this module at compile time would survive a change here.)
#: A part is also given up when one period costs more than this many Newton iterations per
#: step on average, failed attempts included (a converging step takes 2 to 10): the work
#: budget, about 0.3 s of one core per period at 16,384 steps.
ITERATION_BUDGET = 40
#: Why a part was given up (``flags[:, 3]`` of the stepper).
GIVE_UP_NON_FINITE, GIVE_UP_UNCONVERGED, GIVE_UP_WORK = 1, 2, 3


def cache_dir() -> Path:
    """Folder of the stepper's numba cache: ``NUMBA_CACHE_DIR`` where set, else the sub-folder
    ``numba`` of the user cache folder (``platformdirs.user_cache_dir("partsel")``)."""
    given = os.environ.get("NUMBA_CACHE_DIR")
    if given:
        return Path(given)
    import platformdirs

    return Path(platformdirs.user_cache_dir("partsel")) / "numba"


def compiled_cache_present() -> bool:
    """True where this interpreter's compiled stepper is in :func:`cache_dir` (numba's index
    file of ``stepper.run``, one sub-folder per source folder). False: the first simulation of
    this process compiles it (seconds to a minute, once per machine)."""
    tag = f"py{sys.version_info.major}{sys.version_info.minor}"
    return any(cache_dir().glob(f"*/stepper.run-*.{tag}.nbi"))


#: Called (no arguments) just before a simulation compiles the stepper because
#: :func:`compiled_cache_present` is False; the command line registers one that tells the user.
COMPILE_LISTENERS: list[Callable[[], None]] = []


def before_stepper_import() -> None:
    """Tell :data:`COMPILE_LISTENERS` when loading the stepper will compile it (once a
    process, and only while the stepper is not loaded yet)."""
    if "partsel.physics.stepper" in sys.modules or compiled_cache_present():
        return
    for listener in COMPILE_LISTENERS:
        listener()
