"""Export partsel's amplifier macro-model of one part in one design as a SPICE deck.

The deck is plain SPICE3 with ngspice behavioural sources (B-sources with ``exp``, ``min``,
``max`` and the ternary ``a ? b : c``; ``.param`` and ``.func``), and describes exactly the
continuous-time model that :func:`partsel.physics.simulate.simulate` integrates:

* feedback error ``e = v_plus - v_md - beta * v_out`` (:class:`~partsel.physics.circuit.Design`);
* input stage: a node ``nz`` holding the stage's state ``z``, fixed by the algebraic constraint
  ``a z + b_0 t / (1 + gamma t) = e`` with ``t = tanh(z)`` (a B-source current that only that
  root makes zero; see :mod:`partsel.physics.stage`);
* drive node: a capacitor ``C_drv`` charged by ``C_drv * SR_0 t / (1 + gamma t)`` (so
  ``dv_drive/dt`` is the input stage's rate), held inside ``[drive_lo, drive_hi]`` by a stiff
  clamp current (overshoot at most :data:`CLAMP_OVERSHOOT_V` at the fastest rate); a part
  without slew rate has the linear rate ``omega_t e`` instead;
* class A / B: the Darlington base node ``y`` as a capacitor ``C_e`` charged by
  ``(I / beta_D) (exp((x - y) / V_T) - exp(y / V_T))``;
* output node: B-source currents of the source device, the sink device and the internal
  pull-down with the device laws, current limits, ``exp`` argument cap (60) and Early effect of
  :mod:`partsel.physics.stage`, each capped by the current available at the present headroom
  (the swing curves as piecewise-linear functions of headroom, written as nested ternaries with
  the same segment choice and linear extrapolation as :func:`partsel.physics.stage.pwl`);
* load network of :mod:`partsel.physics.loading`: ``R_L`` (DC to ``V_ref``, or through ``C_c``
  whose initial voltage is simulate()'s steady-state start value), ``C_L`` to ground, the
  design's and the fix's resistors to either rail, and the feedback network's load.

The only differences from simulate() are numerical: ngspice integrates with its own method
(trapezoidal by default, adaptive step no longer than simulate()'s step) where simulate() uses
backward Euler at a fixed step, the clamp is stiff rather than ideal, and simulate() corrects the
coupling capacitor by shooting during its warm-up periods while the deck starts it at the same
linear steady-state value and leaves it alone. The deck is partsel's estimate of the part, not a
transistor-level model of it.

References
----------
ngspice User's Manual, version 39: B-sources (non-linear dependent sources), ``.func``,
``.param``, ``.tran``, ``.options``, ``wrdata`` (from memory; checked by running ngspice 39).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from partsel.physics import stepper_layout as _st
from partsel.physics.circuit import Design
from partsel.physics.simulate import coupling_start, default_steps, part_matrix
from partsel.physics.stage import DARLINGTON_C_E, TOPOLOGIES, V_T, StageParams

__all__ = ["C_DRIVE_F", "DATA_COLUMNS", "DEFAULT_DATA_FILE", "pwl_expression", "spice_deck"]

#: Capacitance of the drive (integrator) node, F. Its value is arbitrary (the B-source current
#: is scaled by it); 1 nF keeps the currents in the range ngspice's tolerances suit.
C_DRIVE_F = 1e-9
#: Largest excursion of the drive node beyond its clamp at the fastest possible rate, V.
CLAMP_OVERSHOOT_V = 1e-4
#: Capacitance put on the output node when the design has no load capacitance, F. simulate()
#: solves the output node as an algebraic equation; ngspice's Newton iteration needs a little
#: capacitance there to step over the kinks of the device laws (without it ngspice stops with
#: "timestep too small" in clipping cases). Against the smallest conductance at the node (the
#: pull-down's Early conductance, I_stage / V_EARLY, about 1 uS) it gives a time constant of
#: about 1 ns, three orders below the simulation step, so it does not change the waveform.
C_OUT_NUMERICAL_F = 1e-15
#: Name of the waveform file the deck's control block writes (in ngspice's working folder).
DEFAULT_DATA_FILE = "partsel-vout.dat"
#: Columns of the data file (``wrdata`` with ``wr_singlescale``): time first.
DATA_COLUMNS = ("time", "v(out)", "v(drive)", "i_source", "i_sink", "i_pulldown")


def _num(x: float) -> str:
    """A float in full precision, SPICE syntax."""
    if not math.isfinite(x):
        raise ValueError(f"cannot write the non-finite number {x!r} into a SPICE deck")
    return repr(float(x))


def pwl_expression(var: str, xs: Sequence[float], fs: Sequence[float]) -> str:
    """Piecewise-linear function of ``var`` through the points, as a B-source expression.

    Same segment choice and linear extrapolation at both ends as
    :func:`partsel.physics.stage.pwl_with_slope` (segment ``k`` for ``x_k <= var < x_{k+1}``,
    the first segment below ``x_1``, the last one from ``x_{K-2}`` on; a zero-length segment
    has slope 0; a single point gives a constant). Nested ternaries are exact for any curve,
    convex or not.
    """
    xs = [float(x) for x in xs]
    fs = [float(f) for f in fs]
    if not xs or len(xs) != len(fs):
        raise ValueError("a piecewise-linear curve needs at least one (x, f) point")
    if len(xs) == 1:
        return _num(fs[0])
    lines = []
    for k in range(len(xs) - 1):
        dx = xs[k + 1] - xs[k]
        slope = (fs[k + 1] - fs[k]) / dx if dx > 0 else 0.0
        lines.append(f"({_num(fs[k])} + {_num(slope)}*({var} - {_num(xs[k])}))")
    expr = lines[-1]
    for k in range(len(lines) - 2, -1, -1):
        expr = f"(({var} < {_num(xs[k + 1])}) ? {lines[k]} : {expr})"
    return expr


def _curve(v_row: np.ndarray, i_row: np.ndarray, what: str, index: int) -> tuple[list, list]:
    ok = ~(np.isnan(v_row) | np.isnan(i_row))
    if not ok.any():
        raise ValueError(f"part {index} has no {what} swing curve: the macro-model needs one")
    return list(v_row[ok]), list(i_row[ok])


def spice_deck(
    stage: StageParams,
    index: int,
    design: Design,
    *,
    r_to_neg_ohm: float | None = None,
    r_to_pos_ohm: float | None = None,
    periods: int = 3,
    steps_per_period: int | None = None,
    title: str | None = None,
    data_file: str = DEFAULT_DATA_FILE,
    v_couple_start_v: float | None = None,
) -> str:
    """SPICE deck (ngspice) of part ``index`` of ``stage`` in ``design``.

    Parameters
    ----------
    stage : StageParams
        Parameters of one or more parts on one basis; part ``index`` is exported.
    index : int
        Which part (axis-0 index into ``stage``).
    design : Design
        The circuit.
    r_to_neg_ohm, r_to_pos_ohm : float, optional
        Extra resistors from the output to a rail, ohm, on top of the design's own (a fix), as
        in :func:`~partsel.physics.simulate.simulate`. ``None`` or NaN: none.
    periods : int
        Signal periods to simulate (compare the last one; the first ones settle).
    steps_per_period : int, optional
        simulate()'s steps per period; the deck's largest time step is one period over this.
        Default :func:`~partsel.physics.simulate.default_steps` of this part.
    title : str, optional
        First line of the deck.
    data_file : str
        File the control block writes, relative to ngspice's working folder; columns
        :data:`DATA_COLUMNS` (``wrdata`` with a single time column and a header).
    v_couple_start_v : float, optional
        Initial voltage of the coupling capacitor (output side minus load side), V. Default:
        simulate()'s start value, the linear periodic steady state. Where the drive clamp or
        the slew limit engages, the mean output moves away from its ideal bias and the
        capacitor settles only over many ``R_L C_c``; simulate() finds that state by shooting
        during its warm-up periods, the deck needs it given here (or many periods).

    Returns
    -------
    str
        The deck, ending with ``.end``.

    Raises
    ------
    ValueError
        If the part lacks a parameter the macro-model needs (GBW, a swing curve), or
        ``periods`` < 1.
    """
    if periods < 1:
        raise ValueError(f"periods must be >= 1, got {periods}")
    st = stage.take([index])
    topo = int(st.topology[0])
    name = str(TOPOLOGIES[topo].value)

    def one(arr: np.ndarray) -> float:
        return float(arr[0])

    gbw = one(st.gbw_hz)
    if not (math.isfinite(gbw) and gbw > 0):
        raise ValueError(f"part {index} has no GBW: the macro-model needs one")
    i_stage = one(st.stage_current_a)
    if math.isnan(i_stage):
        i_stage = 0.0  # simulate() treats a missing stage current as zero
    sup = design.supply
    vpos, vneg = sup.v_pos_v, sup.v_neg_v
    f_hz = design.signal.frequency_hz
    period = 1.0 / f_hz
    n = steps_per_period or default_steps(st, design)
    dt = period / n
    t_stop = periods * period

    # Same parameters as simulate() (one formula for every topology: simulate.part_matrix).
    m = part_matrix(
        st,
        design,
        None if r_to_neg_ohm is None else np.array([r_to_neg_ohm], dtype=float),
        None if r_to_pos_ohm is None else np.array([r_to_pos_ohm], dtype=float),
    )[0]
    topo_code = int(m[_st.P_TOPO])
    darlington = topo_code != _st.T_BIASED
    db = float(m[_st.P_DB])
    i_src0 = float(m[_st.P_I_SRC0])
    i_snk0 = float(m[_st.P_I_SNK0])
    i_pd0 = i_stage if darlington else 0.0
    lim_src = float(m[_st.P_LIM_SRC])
    lim_snk = float(m[_st.P_LIM_SNK])
    wt = 2.0 * math.pi * gbw
    sr0 = float(m[_st.P_SR0])
    gam = float(m[_st.P_GAMMA])
    gam_cm = float(m[_st.P_GAMMA_CM])
    a_in = float(m[_st.P_A])
    b0_in = float(m[_st.P_B0])
    sr_r = sr0 / (1.0 + gam + gam_cm)  # the follower's slew rates (largest drive rates)
    sr_f = sr0 / (1.0 - gam - gam_cm)
    beta = design.beta
    drive_lo = float(m[_st.P_DRIVE_LO])
    drive_hi = float(m[_st.P_DRIVE_HI])
    pd_slope = float(m[_st.P_PD_SLOPE])
    pd_const = float(m[_st.P_PD_CONST])
    pos_h, pos_i = _curve(st.swing_pos_v[0], st.swing_pos_i_a[0], "positive", index)
    neg_h, neg_i = _curve(st.swing_neg_v[0], st.swing_neg_i_a[0], "negative", index)
    # Fastest possible drive rate: the slew limits, or omega_t times the largest error.
    span = (drive_hi - drive_lo) + abs(design.signal.bias_v) + design.signal.amplitude_v
    rate_max = min(max(sr_r, sr_f), wt * span) if math.isfinite(sr0) else wt * span
    g_clamp = C_DRIVE_F * rate_max / CLAMP_OVERSHOOT_V

    v0 = float(design.v_ideal(np.array([0.0]))[0])
    ld = design.load
    ac = ld.r_load_ohm is not None and ld.coupling == "ac"
    if ac:
        r_l = float(ld.r_load_ohm)
        c_c = float(ld.c_couple_f or math.inf)
        v_cap0 = coupling_start(design) if v_couple_start_v is None else float(v_couple_start_v)

    def used(key: str) -> str:
        u = st.used.get(key)
        return "?" if u is None else str(u[0])

    basis_text = {
        "typical": "typical (datasheet typical values; mid-range or a limit where none)",
        "worst-case": "worst-case (per parameter the pessimistic side of its guaranteed range)",
    }[st.basis]
    keys = (
        "stage_current",
        "dead_band",
        "gbw",
        "slew_rise",
        "slew_fall",
        "source_limit",
        "sink_limit",
        "swing_pos",
        "swing_neg",
    )
    out: list[str] = []
    add = out.append
    first = title or f"partsel macro-model: part {index} ({name}) in design {design.name!r}"
    add(" ".join(first.split()))  # one line
    add("* Exported by partsel (partsel.physics.spice). This is partsel's own behavioural")
    add("* macro-model of the amplifier output stage and loop, an estimate for comparing parts,")
    add("* NOT a transistor-level model of the part.")
    add(f"* part index {index}, topology {name}")
    add(f"* basis: {basis_text}")
    add("* side used: " + ", ".join(f"{k}={used(k)}" for k in keys))
    add(
        f"* design: {' '.join(design.name.split())!r}; simulate() step {dt!r} s "
        f"({n} steps per period); {periods} periods"
    )
    add(f"* waveform data file: {data_file} (columns: " + " ".join(DATA_COLUMNS) + ")")
    add("*")
    add("* ---- constants (SI units) ----")
    params = {
        "p_wt": wt,  # unity-gain angular frequency 2 pi GBW, rad/s
        "p_beta": beta,  # feedback factor
        "p_cd": C_DRIVE_F,
        "p_dlo": drive_lo,
        "p_dhi": drive_hi,
        "p_gcl": g_clamp,
        "p_invvs": float(m[_st.P_VS_SRC]),  # 1 / source law's voltage scale (biased), 1/V
        "p_invvk": float(m[_st.P_VS_SNK]),  # 1 / sink law's voltage scale, 1/V
        "p_invvt": 1.0 / V_T,
        "p_ibd": float(m[_st.P_INV_BETA_D]),  # 1 / Darlington beta
        "p_ce": DARLINGTON_C_E,  # Darlington base-node capacitance, F
        "p_limdev": min(lim_src, 1.0),  # current limit of each Darlington transistor, A
        "p_db": db,  # dead band, V
        "p_isrc0": i_src0,
        "p_isnk0": i_snk0,
        "p_pdc": pd_const,  # pull-down current = p_pdc + p_pds * v_out
        "p_pds": pd_slope,
        "p_vpos": vpos,
        "p_vneg": vneg,
    }
    if math.isfinite(sr0):
        params.update({"p_sr0": sr0, "p_gam": gam, "p_gcm": gam_cm, "p_a": a_in, "p_b0": b0_in})
    for key, val in params.items():
        add(f".param {key}={_num(val)}")
    if math.isfinite(lim_src):
        add(f".param p_limsrc={_num(lim_src)}")
    if math.isfinite(lim_snk):
        add(f".param p_limsnk={_num(lim_snk)}")
    add("*")
    add("* ---- input source and feedback error e = v_plus - v_md - beta*v_out ----")
    sig = design.signal
    add(f"Vin in 0 SIN({_num(sig.bias_v)} {_num(sig.amplitude_v)} {_num(f_hz)} 0 0 0)")
    if design.closed_loop.configuration == "non-inverting":
        v_plus = "v(in)"
        v_md = _num((1.0 - beta) * design.reference_v)
    else:
        v_plus = _num(design.reference_v)
        v_md = f"{_num(1.0 - beta)}*v(in)"
    add(f".func err(vo) {{{v_plus} - {v_md} - p_beta*vo}}")
    if math.isfinite(sr0):
        add("* ---- input stage: state z (node nz), a z + b0 t/(1 + gam t) = e, t = tanh(z) ----")
        add(".func frac(z) {tanh(z)/(1 + p_gam*tanh(z))}")
        if design.closed_loop.configuration == "non-inverting":
            w_s = _num(2.0 * math.pi * f_hz)
            cm = f"{_num(sig.amplitude_v)}*{w_s}*cos({w_s}*time)"
        else:
            cm = "0"
        add("* tail current (slew rate) less the common-mode input's share of its slope")
        add(f".func srcm() {{max(p_sr0 - p_gcm*{cm}, {_num(0.05 * sr0)})}}")
        add("Bz 0 nz I = err(v(out)) - (p_a*v(nz) + p_b0*srcm()/p_sr0*frac(v(nz)))")
        add("Rz nz 0 1e15")
        rate = "srcm()*frac(v(nz))"
    else:
        rate = "p_wt*err(v(out))"
    add("*")
    add("* ---- drive node: integrator dv/dt = rate, clamped to [p_dlo, p_dhi] ----")
    add(f"Cdrv drive 0 {{p_cd}} IC={_num(v0 + float(m[_st.P_X0]))}")
    add(f"Bint 0 drive I = p_cd*{rate}")
    add("Bclamp drive 0 I = p_gcl*(max(v(drive) - p_dhi, 0) + min(v(drive) - p_dlo, 0))")
    add("*")
    add("* ---- output stage (drive coordinate x = v(drive) - v(out)) ----")
    add("* current available at headroom h to V+ / V- (inverse swing curves), A")
    add(f".func availpos(vo) {{max({pwl_expression('(p_vpos - vo)', pos_h, pos_i)}, 0)}}")
    add(f".func availneg(vo) {{max({pwl_expression('(vo - p_vneg)', neg_h, neg_i)}, 0)}}")
    if darlington:
        add("* Darlington: base node y (node ny) with C_e dy/dt = i1 - i2 / beta_D")
        add("* each transistor's current capped at the source limit (1 A where none)")
        add(".func i2(y) {min(p_isrc0*exp(min(y*p_invvt, 60)), p_limdev)}")
        add(".func i1(x, y) {min(p_isrc0*p_ibd*exp(min((x - y)*p_invvt, 60)), p_limdev)}")
        add(f"Cy ny 0 {{p_ce}} IC={_num(float(m[_st.P_Y0]))}")
        add("By 0 ny I = i1(v(drive) - v(out), v(ny)) - p_ibd*i2(v(ny))")
        src = "(i2(y) + i1(x, y))"
        src_args = "x, y, vo"
    else:
        src = "p_isrc0*exp(min(x*p_invvs, 60))"
        src_args = "x, vo"
    if math.isfinite(lim_src):
        src = f"min({src}, p_limsrc)"
    add(f".func isrc({src_args}) {{min({src}, availpos(vo))}}")
    if i_pd0 > 0:
        add(".func ipd(vo) {min(p_pdc + p_pds*vo, availneg(vo))}")
        room = "max(availneg(vo) - ipd(vo), 0)"
    else:
        add(".func ipd(vo) {0}")
        room = "availneg(vo)"
    snk = "p_isnk0*exp(min((-x - p_db)*p_invvk, 60))"
    if math.isfinite(lim_snk):
        snk = f"min({snk}, p_limsnk)"
    add(f".func isnk(x, vo) {{min({snk}, {room})}}")
    if darlington:
        add("Bsrc 0 out I = isrc(v(drive) - v(out), v(ny), v(out))")
    else:
        add("Bsrc 0 out I = isrc(v(drive) - v(out), v(out))")
    if i_snk0 > 0:
        add("Bsnk out 0 I = isnk(v(drive) - v(out), v(out))")
    if i_pd0 > 0:
        add("Bpd out 0 I = ipd(v(out))")
    add("*")
    add("* ---- load network ----")
    add("Vpos vpos 0 DC {p_vpos}")
    add("Vneg vneg 0 DC {p_vneg}")
    if ld.r_load_ohm is not None:
        add(f"Vref lref 0 DC {_num(ld.reference_v)}")
        if ac:
            if math.isfinite(c_c):
                add(f"Cc out lc {_num(c_c)} IC={_num(v_cap0)}")
            else:
                add(f"* no coupling capacitance given: an ideal one holding {v_cap0!r} V")
                add(f"Vcc out lc DC {_num(v_cap0)}")
            add(f"RL lc lref {_num(r_l)}")
        else:
            add(f"RL out lref {_num(float(ld.r_load_ohm))}")
    if ld.c_load_f > 0:
        add(f"CL out 0 {_num(ld.c_load_f)} IC={_num(v0)}")
    else:
        add("* numerical aid, not in the model: a tiny capacitance keeps ngspice's Newton steps")
        add("* on the output node well-behaved at the device-law kinks")
        add(f"Cnum out 0 {_num(C_OUT_NUMERICAL_F)} IC={_num(v0)}")
    add("* resistors to the rails: Rd* from the design, Rx* extra ones (a fix under test)")
    for label, r, rail in (
        ("Rdneg", ld.r_to_neg_ohm, "vneg"),
        ("Rdpos", ld.r_to_pos_ohm, "vpos"),
        ("Rxneg", r_to_neg_ohm, "vneg"),
        ("Rxpos", r_to_pos_ohm, "vpos"),
    ):
        if r is not None and math.isfinite(r):
            add(f"{label} out {rail} {_num(float(r))}")
    rfb = design.feedback_load_ohm
    if rfb is not None:
        add(f"Vfb lfb 0 DC {_num(design.reference_v)}")
        add(f"Rfb out lfb {_num(rfb)}")
    add("*")
    add("* ---- analysis ----")
    add(".options reltol=1e-6 abstol=1e-12 vntol=1e-7 chgtol=1e-16 itl4=100")
    ic = f".ic v(out)={_num(v0)} v(drive)={_num(v0 + float(m[_st.P_X0]))}"
    if darlington:
        ic += f" v(ny)={_num(float(m[_st.P_Y0]))}"
    if math.isfinite(sr0):
        ic += " v(nz)=0"
    add(ic)
    add(f".tran {_num(dt)} {_num(t_stop)} 0 {_num(dt)} uic")
    add(".control")
    add("set wr_singlescale")
    add("set wr_vecnames")
    add(
        "save v(out) v(drive) @bsrc[i]"
        + (" @bsnk[i]" if i_snk0 > 0 else "")
        + (" @bpd[i]" if i_pd0 > 0 else "")
    )
    add("run")
    add("let i_source = @bsrc[i]")
    add("let i_sink = " + ("@bsnk[i]" if i_snk0 > 0 else "0*v(out)"))
    add("let i_pulldown = " + ("@bpd[i]" if i_pd0 > 0 else "0*v(out)"))
    add(f"wrdata {data_file} v(out) v(drive) i_source i_sink i_pulldown")
    add("quit")
    add(".endc")
    add(".end")
    return "\n".join(out) + "\n"
