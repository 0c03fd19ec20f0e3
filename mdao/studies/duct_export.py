"""The transition duct as hardware: its stations, section loops and figure for CAD.

:func:`duct_export` optimizes a case with the geometric duct (or evaluates its start point) and
returns the duct's geometry at that design as plain data (:func:`duct_data`);
:func:`write_duct_files` writes ``transition.csv`` (one row per station), ``sections.csv``
(closed point loops on each super-ellipse section, for a loft) and ``duct.png``
(:func:`draw_duct`); the command ``blownwing duct`` is :mod:`mdao.cli`. The review report draws
the same figure for geometric-duct cases.

The files describe one duct: each of the case's ``duct.fans`` fans feeds its own share of the
slot (``blown_span / fans`` wide) through an identical transition
(:func:`mdao.physics.chain.duct_stations`). Axes: ``x`` along the duct's straight axis from the
fan face, ``y`` spanwise, ``z`` thickness-wise, the sections centred on the axis.
"""
from dataclasses import dataclass, field

import numpy as np

from mdao import CAUTION, __version__
from mdao.files import safe_text, write_atomic
from mdao.physics import chain
from mdao.system import chain_options, chain_parameters, design_point

__all__ = ["DuctExport", "SECTION_QUADRANT_POINTS", "duct_data", "duct_export", "section_loops",
           "transition_csv", "sections_csv", "write_duct_files", "draw_duct"]

#: Intervals per quadrant of each section loop: 4 x 48 = 192 points around (193 rows with the
#: closing point). Measured on the bundled geometric case over its slot-ratio bounds
#: (docs/theory.md, "The duct for CAD"): the polygon through them stays within 0.03 mm of the
#: curve (1.3 % of the thinnest slot's 1.8 mm semi-thickness) and within 6e-4 of the exact area
#: at every station, so a loft (straight or splined between the points) follows the section.
SECTION_QUADRANT_POINTS = 48
#: Share of the points spaced by arc length; the rest by the turning of the tangent (corners).
ARC_SHARE = 0.5
#: Fine parameter points per quadrant on which the spacing is worked out (resolves the corner of
#: exponents up to 100, about 1/n wide in the parameter, by some 20 points).
_FINE = 4097
#: Columns of ``transition.csv``: header -> key of :func:`duct_data` (angles on the row that
#: ends their segment).
TRANSITION_COLUMNS = {"x [m]": "x_m", "semi_axis_span [m]": "semi_axis_span_m",
                      "semi_axis_thickness [m]": "semi_axis_thickness_m",
                      "exponent [-]": "exponent", "area [m^2]": "area_m2",
                      "perimeter [m]": "perimeter_m", "hydraulic_diameter [m]": "hydraulic_diameter_m",
                      "span_wall_half_angle [deg]": "span_wall_half_angle_deg",
                      "thickness_wall_half_angle [deg]": "thickness_wall_half_angle_deg"}
SECTION_COLUMNS = ("station", "x [m]", "y [m]", "z [m]")


@dataclass
class DuctExport:
    """The duct at a design: ``data`` (:func:`duct_data`) and the outcome it came from."""

    converged: bool
    message: str
    data: dict
    outcome: object = field(repr=False, default=None)


def duct_data(case, outcome, source="optimum"):
    """The transition duct of a geometric-duct case at a design, as plain numbers (SI; angles
    also in degrees).

    The geometry is the case's chain parameters with the design's wing-level variables (the
    slot ratio, and the fan diameter when it is a design variable) through
    :func:`mdao.physics.chain.duct_stations`: one of the ``fans`` identical ducts.

    Parameters
    ----------
    case : mdao.case.Case
        With ``duct.model = "geometric"``.
    outcome : mdao.optimum.Outcome
        The optimum or the evaluated start point.
    source : str
        Words for the design (``"optimum"`` or ``"start point"``).

    Returns
    -------
    dict
        ``source``, ``fans``, ``slot_ratio``, ``fan_diameter_m``, ``slot_width_m``,
        ``slot_height_m``, ``length_m``, ``slot_exponent``, ``schedule``, the station arrays
        (lists, ``stations`` long) ``x_m``, ``semi_axis_span_m``, ``semi_axis_thickness_m``,
        ``exponent``, ``area_m2``, ``perimeter_m``, ``hydraulic_diameter_m``, the angles between
        stations (``stations - 1`` long) ``span_wall_half_angle_deg``,
        ``thickness_wall_half_angle_deg``, ``diffusion_half_angle_deg``, their limits
        ``max_wall_half_angle_deg`` and ``max_diffusion_half_angle_deg``, and
        ``within_limits``.
    """
    if case.duct["model"] != "geometric":
        raise ValueError(f"duct.model = {case.duct['model']!r}: the duct's geometry needs "
                         "duct.model = \"geometric\"")
    params = chain_parameters(case, **design_point(outcome.values))
    opts = chain_options(case)
    st = chain.duct_stations(params, opts)
    p = chain.with_defaults(params, opts)

    def wing(name):
        return float(np.asarray(p[name], float).flat[0])

    deg = np.degrees
    wall = np.degrees(case.duct["max_wall_half_angle"])
    cone = np.degrees(case.duct["max_diffusion_half_angle"])
    span, thick = deg(st.span_wall_half_angle), deg(st.thickness_wall_half_angle)
    diffusion = deg(st.half_angle)
    return {
        "source": source, "fans": int(opts.fans), "schedule": opts.schedule,
        "slot_ratio": wing("slot_ratio"), "fan_diameter_m": wing("fan_diameter"),
        "slot_width_m": wing("blown_span") / opts.fans,
        "slot_height_m": wing("slot_ratio") * wing("chord"),
        "length_m": wing("transition_length"), "slot_exponent": wing("slot_exponent"),
        "x_m": st.position.tolist(), "semi_axis_span_m": st.semi_axis_y.tolist(),
        "semi_axis_thickness_m": st.semi_axis_z.tolist(), "exponent": st.exponent.tolist(),
        "area_m2": st.area.tolist(), "perimeter_m": st.perimeter.tolist(),
        "hydraulic_diameter_m": st.hydraulic_diameter.tolist(),
        "span_wall_half_angle_deg": span.tolist(), "thickness_wall_half_angle_deg": thick.tolist(),
        "diffusion_half_angle_deg": diffusion.tolist(),
        "max_wall_half_angle_deg": float(wall), "max_diffusion_half_angle_deg": float(cone),
        "within_limits": bool(max(span.max(), thick.max()) <= wall * (1 + 1e-6)
                              and diffusion.max() <= cone * (1 + 1e-6)),
    }


def duct_export(case, start=False):
    """Optimize a geometric-duct case (or evaluate its start point) and take its duct.

    Parameters
    ----------
    case : mdao.case.Case
    start : bool
        The case's start point (:func:`mdao.optimum.evaluate_start_point`) instead of the
        optimum.

    Returns
    -------
    DuctExport
        ``converged`` False (and ``data`` None) when the optimizer did not converge; with
        ``start`` it is True (nothing to converge).

    Raises
    ------
    ValueError
        When the case's duct is not geometric.
    """
    from mdao.optimum import evaluate_start_point, optimize

    if case.duct["model"] != "geometric":
        raise ValueError(f"duct.model = {case.duct['model']!r}: the duct command needs "
                         "duct.model = \"geometric\"")
    if start:
        outcome = evaluate_start_point(case)
        return DuctExport(True, outcome.message, duct_data(case, outcome, "start point"), outcome)
    outcome = optimize(case)
    if not outcome.converged:
        return DuctExport(False, outcome.message, None, outcome)
    return DuctExport(True, outcome.message, duct_data(case, outcome, "optimum"), outcome)


# --- section loops ------------------------------------------------------------------------------
def _quadrant(a, b, n, s):
    """Points of the super-ellipse's first quadrant at parameter ``s`` in [0, 2 tau]
    (tau = 2**(-1/n), the diagonal point): from (a, 0) at s = 0 to (0, b) at s = 2 tau.

    The quarter is taken as two graphs, as in :func:`mdao.physics.superellipse.perimeter`: the
    side ``z = b u, y = a (1 - u**n)**(1/n)`` for ``u = s <= tau`` and the flat
    ``y = a v, z = b (1 - v**n)**(1/n)`` for ``v = 2 tau - s``; both have bounded slopes, so a
    uniform fine grid in ``s`` resolves the whole curve, and every point lies on it
    (|y/a|**n + |z/b|**n = 1 to round-off)."""
    tau = 2.0 ** (-1.0 / n)
    side = s <= tau
    u = np.where(side, s, 2.0 * tau - s)
    rest = np.exp(np.log1p(-np.minimum(u, tau) ** n) / n)
    y = np.where(side, a * rest, a * u)
    z = np.where(side, b * u, b * rest)
    return y, z


def section_loops(semi_span, semi_thickness, exponent, quadrant_points=SECTION_QUADRANT_POINTS):
    """Closed point loops on super-ellipse sections, for a loft.

    Each loop runs counter-clockwise in the (y, z) plane from (a, 0), with ``quadrant_points``
    intervals per quadrant, the quadrants mirror images of the first (so the four axis points
    are on every loop and the points of one station correspond to those of the next), and the
    first point repeated at the end: ``4 quadrant_points + 1`` points. In the first quadrant the
    points equidistribute ``ARC_SHARE`` of the arc length plus the rest of the tangent's
    turning: even on a circle (n = 2), clustered at the corners of a squarish section (large n)
    while its flat sides keep points in proportion to their length.

    Parameters
    ----------
    semi_span, semi_thickness : array_like, shape (m,)
        Semi-axes a (along y) and b (along z) of each section, [m], > 0.
    exponent : array_like, shape (m,)
        Super-ellipse exponent of each section, [-], >= 2.
    quadrant_points : int
        Intervals per quadrant, >= 2.

    Returns
    -------
    y, z : ndarray, shape (m, 4 quadrant_points + 1)
        Coordinates of the loops, [m]; ``y[:, -1] == y[:, 0]`` and ``z[:, -1] == z[:, 0]``.

    References
    ----------
    .. [1] Weisstein, E. W., "Superellipse", MathWorld (the curve).
    .. [2] Equidistribution of a monitor of arc length and curvature: de Boor, C., "Good
       approximation by splines with variable knots. II", in *Conference on the Numerical
       Solution of Differential Equations*, Lecture Notes in Mathematics 363, Springer, 1974
       (from memory).

    Examples
    --------
    A circle gets evenly spaced points (the monitor is uniform on it):

    >>> y, z = section_loops([1.0], [1.0], [2.0], quadrant_points=4)
    >>> np.round(np.degrees(np.arctan2(z[0], y[0])), 1).tolist()[:5]
    [0.0, 22.5, 45.0, 67.5, 90.0]
    """
    a = np.atleast_1d(np.asarray(semi_span, float))[:, None]
    b = np.atleast_1d(np.asarray(semi_thickness, float))[:, None]
    n = np.atleast_1d(np.asarray(exponent, float))[:, None]
    if not isinstance(quadrant_points, (int, np.integer)) or quadrant_points < 2:
        raise ValueError(f"quadrant_points must be an integer >= 2; got {quadrant_points!r}")
    if np.any(~(a > 0)) or np.any(~(b > 0)) or np.any(~(n >= 2)):
        raise ValueError("section loops need semi-axes > 0 and exponents >= 2")
    tau = 2.0 ** (-1.0 / n)
    s = np.linspace(0.0, 1.0, _FINE) * 2.0 * tau                     # (m, fine)
    y, z = _quadrant(a, b, n, s)
    dy, dz = np.diff(y, axis=-1), np.diff(z, axis=-1)
    length = np.concatenate([np.zeros((len(a), 1)), np.cumsum(np.hypot(dy, dz), axis=-1)],
                            axis=-1)
    # the tangent's heading on each fine chord; its turning accumulated at the fine points
    # (each interior point carries the turn between the chords on either side)
    heading = np.unwrap(np.arctan2(dz, dy), axis=-1)
    steps = np.abs(np.diff(heading, axis=-1))
    turn = np.concatenate([np.zeros((len(a), 1)), np.cumsum(steps, axis=-1),
                           np.sum(steps, axis=-1, keepdims=True)], axis=-1)
    monitor = (ARC_SHARE * length / length[:, -1:]
               + (1.0 - ARC_SHARE) * turn / np.maximum(turn[:, -1:], 1e-300))
    levels = np.linspace(0.0, 1.0, quadrant_points + 1)
    s_at = np.array([np.interp(levels, mon / mon[-1], row) for mon, row in zip(monitor, s)])
    s_at[:, 0], s_at[:, -1] = 0.0, 2.0 * tau[:, 0]
    qy, qz = _quadrant(a, b, n, s_at)
    loop_y = np.concatenate([qy, -qy[:, -2::-1], -qy[:, 1:], qy[:, -2::-1]], axis=-1)
    loop_z = np.concatenate([qz, qz[:, -2::-1], -qz[:, 1:], -qz[:, -2::-1]], axis=-1)
    return loop_y + 0.0, loop_z + 0.0          # + 0.0: no negative zeros


# --- files --------------------------------------------------------------------------------------
def _header(case, data, what):
    title = safe_text(case.title, 300, newlines=False)     # one comment line, whatever it holds
    return [f"# blownwing {__version__}: {what} of the transition duct, {title}",
            f"# at the {data['source']} (slot ratio {data['slot_ratio']:.6g}); ONE of the "
            f"{data['fans']} identical ducts (one per fan): fan circle "
            f"{data['fan_diameter_m'] * 1e3:.4g} mm to a slot of {data['slot_width_m'] * 1e3:.4g}"
            f" x {data['slot_height_m'] * 1e3:.4g} mm (blown span / fans x slot ratio x chord) "
            f"over {data['length_m'] * 1e3:.4g} mm",
            "# x along the duct's straight axis from the fan face; y spanwise, z thickness-wise; "
            "sections |y/a|^n + |z/b|^n = 1 centred on the axis",
            f"# {CAUTION}"]


def _num(value):
    return format(float(value) + 0.0, ".12g")


def transition_csv(case, data):
    """The text of ``transition.csv``: one row per station (:data:`TRANSITION_COLUMNS`); each
    wall angle is that of the segment ending at its row (blank on the first row)."""
    lines = _header(case, data, "stations")
    lines.append("# wall half-angles: atan(d semi-axis / dx) of the segment ending at the row "
                 "(blank at x = 0), positive where the wall diverges")
    lines.append(",".join(TRANSITION_COLUMNS))
    count = len(data["x_m"])
    for i in range(count):
        cells = []
        for key in TRANSITION_COLUMNS.values():
            values = data[key]
            if len(values) == count - 1:         # between stations: on the row that ends it
                cells.append("" if i == 0 else _num(values[i - 1]))
            else:
                cells.append(_num(values[i]))
        lines.append(",".join(cells))
    return "\n".join(lines) + "\n"


def sections_csv(case, data, quadrant_points=SECTION_QUADRANT_POINTS):
    """The text of ``sections.csv``: for each station (numbered from 0 at the fan face) its
    closed loop of ``4 quadrant_points + 1`` points (:func:`section_loops`), the first point
    repeated at the end."""
    y, z = section_loops(data["semi_axis_span_m"], data["semi_axis_thickness_m"],
                         data["exponent"], quadrant_points)
    lines = _header(case, data, "section loops")
    lines.append(f"# each station: a closed loop of {y.shape[1]} points, counter-clockwise in "
                 "(y, z) from (a, 0), the first point repeated at the end")
    lines.append(",".join(SECTION_COLUMNS))
    for i, x in enumerate(data["x_m"]):
        xs = _num(x)
        lines.extend(f"{i},{xs},{_num(yy)},{_num(zz)}" for yy, zz in zip(y[i], z[i]))
    return "\n".join(lines) + "\n"


def write_duct_files(case, data, out_dir, plots=True):
    """Write ``transition.csv``, ``sections.csv`` and (with ``plots`` and matplotlib)
    ``duct.png`` to ``out_dir``, each atomically; returns the paths written."""
    from pathlib import Path

    out = Path(out_dir)
    files = [out / "transition.csv", out / "sections.csv"]
    write_atomic(files[0], transition_csv(case, data))
    write_atomic(files[1], sections_csv(case, data))
    if plots:
        figure = draw_duct(data, out / "duct.png", title=case.title)
        if figure is not None:
            files.append(figure)
    return files


# --- figure -------------------------------------------------------------------------------------
def draw_duct(data, path, title=None):
    """Plan and side view of the duct, its area and its wall angles along the length (PNG).

    Parameters
    ----------
    data : dict
        From :func:`duct_data`.
    path : str or path-like
        The PNG, written atomically.
    title : str, optional
        The case's title.

    Returns
    -------
    path or None
        ``path``, or None when matplotlib is not installed.
    """
    try:
        from matplotlib.figure import Figure
    except ImportError:
        return None
    x = np.asarray(data["x_m"]) * 1e3
    a = np.asarray(data["semi_axis_span_m"]) * 1e3
    b = np.asarray(data["semi_axis_thickness_m"]) * 1e3
    mid = 0.5 * (x[1:] + x[:-1])
    fig = Figure(figsize=(11, 7.5))
    axes = fig.subplots(2, 2)
    for ax, half, view, label in ((axes[0, 0], a, "plan view (span)", "y, spanwise [mm]"),
                                  (axes[0, 1], b, "side view (thickness)",
                                   "z, thickness-wise [mm]")):
        ax.fill_between(x, -half, half, color="#c6dbef")
        ax.plot(x, half, "k-", x, -half, "k-", lw=1.2)
        ax.axhline(0.0, color="0.5", lw=0.6, ls="-.")
        ax.set_aspect("equal", adjustable="box")
        ax.set_xlabel("x from the fan face [mm]")
        ax.set_ylabel(label)
        ax.set_title(view)
    ax = axes[1, 0]
    ax.plot(x, np.asarray(data["area_m2"]) * 1e4, "k-", marker=".", ms=3)
    ax.set_xlabel("x from the fan face [mm]")
    ax.set_ylabel("section area [cm$^2$]")
    ax.set_title("area (fan circle to slot)")
    ax.set_ylim(bottom=0.0)
    ax = axes[1, 1]
    ax.plot(mid, data["span_wall_half_angle_deg"], "-", color="#D55E00", label="span walls")
    ax.plot(mid, data["thickness_wall_half_angle_deg"], "-", color="#0072B2",
            label="thickness walls")
    ax.plot(mid, data["diffusion_half_angle_deg"], "--", color="0.3", label="equivalent cone")
    ax.axhline(data["max_wall_half_angle_deg"], color="#D55E00", lw=1, ls=":",
               label=f"wall limit {data['max_wall_half_angle_deg']:.3g} deg")
    ax.axhline(data["max_diffusion_half_angle_deg"], color="0.3", lw=1, ls=":",
               label=f"cone limit {data['max_diffusion_half_angle_deg']:.3g} deg")
    ax.axhline(0.0, color="k", lw=0.6)
    ax.set_xlabel("x from the fan face [mm]")
    ax.set_ylabel("wall half-angle, + diverging [deg]")
    ax.set_title("wall half-angles between stations")
    ax.legend(fontsize=8)
    title = safe_text(title, 120, newlines=False).replace("$", r"\$") if title else ""
    fig.suptitle(f"{title + ': ' if title else ''}one of {data['fans']} transition ducts at the "
                 f"{data['source']} (slot ratio {data['slot_ratio']:.4g})", fontsize=10)
    fig.tight_layout()
    write_atomic(path, lambda handle: fig.savefig(handle, format="png", dpi=110))
    return path
