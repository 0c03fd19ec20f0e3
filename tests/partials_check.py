"""Partial-derivative checks shared by the component tests.

``assert_partials`` runs two checks on a component set up alone:

1. OpenMDAO's ``check_partials`` with central finite differences (relative step), asserting the
   relative error of every declared pair below ``rtol``, and that no pair has ``uncovered_nz``
   entries (a pattern declared too sparse).
2. An independent dense central-difference Jacobian over *every* (output, input) pair, declared or
   not, compared entry by entry with the analytic Jacobian expanded to dense. This fails on a
   sparsity pattern that is too sparse and on a pair that was never declared, which
   ``assert_check_partials`` alone does not catch.
"""
import numpy as np
import openmdao.api as om


def component_problem(comp, inputs):
    """A problem of ``comp`` alone (complex memory allocated), ``inputs`` set and run."""
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("c", comp, promotes=["*"])
    prob.setup(force_alloc_complex=True)
    for name, value in inputs.items():
        prob.set_val(name, value)
    prob.run_model()
    return prob


def _dense_fd(prob, comp, rel_step=1e-6):
    outs = comp.list_outputs(out_stream=None, prom_name=True)
    ins = comp.list_inputs(out_stream=None, prom_name=True)
    out_names = [meta["prom_name"] for _, meta in outs]
    in_names = [meta["prom_name"] for _, meta in ins]
    base = {n: prob.get_val(n).copy() for n in in_names}
    jac = {}
    for wrt in in_names:
        x0 = base[wrt]
        flat = x0.ravel()
        cols = {of: [] for of in out_names}
        for k in range(flat.size):
            h = rel_step * max(abs(flat[k]), 1e-3)
            vals = []
            for sign in (1.0, -1.0):
                x = flat.copy()
                x[k] += sign * h
                prob.set_val(wrt, x.reshape(x0.shape))
                prob.run_model()
                vals.append({of: prob.get_val(of).ravel().copy() for of in out_names})
            for of in out_names:
                cols[of].append((vals[0][of] - vals[1][of]) / (2 * h))
        prob.set_val(wrt, x0)
        for of in out_names:
            jac[of, wrt] = np.array(cols[of]).T
    prob.run_model()
    return jac, out_names, in_names


def assert_partials(comp, inputs=None, rtol=1e-6, atol=1e-10, skip_outputs=()):
    """Check a component's analytic partials against finite differences, values and sparsity.

    Parameters
    ----------
    comp : om.ExplicitComponent
        A fresh component instance.
    inputs : dict, optional
        Input values by promoted name (random values inside the valid range).
    rtol, atol : float
        Relative tolerance (on each pair's largest entry) and absolute floor.
    skip_outputs : iterable of str
        Outputs that are flags without derivatives (compared against zero analytic partials
        is then skipped).
    """
    prob = component_problem(comp, inputs or {})
    data = prob.check_partials(out_stream=None, method="fd", form="central", step=1e-6,
                               step_calc="rel_avg")
    cdata = data["c"]
    for (of, wrt), pair in cdata.items():
        if of.split(".")[-1] in skip_outputs:
            continue
        assert not pair.get("uncovered_nz"), f"{of} wrt {wrt}: pattern too sparse at {pair['uncovered_nz']}"
        err = pair["abs error"].forward
        mag = max(pair["magnitude"].fd, pair["magnitude"].forward)
        assert err <= rtol * mag + atol, f"{of} wrt {wrt}: abs error {err:.3e} vs magnitude {mag:.3e}"

    jac_fd, out_names, in_names = _dense_fd(prob, comp)
    for (of, wrt), fd in jac_fd.items():
        if of in skip_outputs:
            continue
        pair = cdata.get((of, wrt))
        analytic = np.zeros_like(fd) if pair is None else np.asarray(pair["J_fwd"]).reshape(fd.shape)
        scale = max(np.abs(fd).max(), np.abs(analytic).max())
        worst = np.abs(fd - analytic).max()
        assert worst <= 1e-5 * scale + atol, (
            f"dense check {of} wrt {wrt}: worst {worst:.3e} of scale {scale:.3e}"
            + (" (pair not declared)" if pair is None else ""))
    return prob


#: Constants of a small blown wing for the fused chain's partial checks (values of these tests,
#: inside the declared ranges; not of any source).
WING = {"slot_ratio": 0.01, "chord": 0.4, "blown_span": 2.8, "jet_loss_factor": 1.25,
        "freestream_assist": 0.9, "fan_rated_efficiency": 0.7, "drag_clean": 0.012,
        "drag_per_momentum": -1.3, "slot_drag": 0.006, "slot_drag_per_ratio": 0.5,
        "drag_per_momentum_per_ratio": 30.0, "drag_quadratic": 0.4, "lift_per_momentum": 3.0,
        "motor_efficiency": 0.9, "chain_efficiency": 0.8}
#: The aircraft around it (four nodes; rates of climb away from zero, where a relative step is
#: all round-off).
AIRCRAFT = {"aircraft_mass": 21.0, "wing_area": 1.4, "zero_lift_drag": 0.03,
            "aspect_ratio": 10.0, "span_efficiency": 0.82,
            "climb_rate": np.array([1.5, -1.2, 2.0, -0.9])}


def chain_inputs(seed, speed=(18.0, 40.0), momentum=(0.01, 0.08), rise=(200.0, 3000.0),
                 altitude=(0.0, 3000.0), aircraft=False, drop=(), **overrides):
    """Random operating points at four nodes with :data:`WING` (and :data:`AIRCRAFT`), some
    names left out (``drop``: e.g. constants a lift table gives) or replaced (``overrides``)."""
    rng = np.random.default_rng(seed)
    n = 4
    inputs = {"altitude": rng.uniform(*altitude, n), "speed": rng.uniform(*speed, n),
              "duration": rng.uniform(100.0, 4000.0, n),
              "momentum_coefficient": rng.uniform(*momentum, n),
              "fan_pressure_rise": rng.uniform(*rise, n), **WING}
    if aircraft:
        inputs.update(AIRCRAFT)
    inputs.update(overrides)
    return {k: v for k, v in inputs.items() if k not in drop}


def group_problem(inputs=None, num_nodes=4, **options):
    """A problem of :class:`mdao.system.BlownWingGroup` alone (names promoted) with
    ``options``; with ``inputs`` they are set and the model is run."""
    from mdao.system import BlownWingGroup
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("w", BlownWingGroup(num_nodes=num_nodes, **options), promotes=["*"])
    prob.setup()
    if inputs is not None:
        for name, value in inputs.items():
            prob.set_val(name, value)
        prob.run_model()
    return prob
