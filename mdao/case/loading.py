"""Reading and validating a case file into a :class:`Case` (every value in SI).

Every dimensional value is a string with its unit (``"0.55 m"``, ``"45 m/s"``, ``"1.5 h"``,
``"60000 rpm"``, ``"3 deg"``), read by pint. Any wrong dimension, missing or unknown key, value
out of range or inconsistent bound raises :class:`CaseError` naming the key, the value and what
is allowed. docs/case-files.md describes every key.
"""
import copy
import math
from dataclasses import dataclass, field, replace
from pathlib import Path

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

import numpy as np

from mdao.case.errors import CaseError
from mdao.case.fragment import load_fragment
from mdao.case.schema import (DISTRIBUTIONS, REQUIRED, SCHEMA, SEGMENT, TOP_LEVEL, Spec,
                              dimension_of)
from mdao.parameters import CHAIN_PARAMETERS, PARAMETERS, RENAMED, chain_parameters, parameter
from mdao.units import (MAX_CASE_BYTES, UnitError, read_table, read_text, shown, shown_path,
                        to_si)

#: Prefix of a one-segment objective, ``"segment:NAME"``.
SEGMENT_OBJECTIVE = "segment:"
#: Most segments a case may have (each is a column of every vectorized evaluation).
MAX_SEGMENTS = 200
#: Longest title and segment name [characters].
MAX_TITLE = 200
MAX_NAME = 60
#: Most Monte Carlo samples times segments of a review: the samples are evaluated in one
#: vectorized call (:mod:`mdao.studies.uncertainty`); 10 000 000 samples took 9 GB, about
#: 0.9 kB each, counted here per sample and segment (under about 2 GB).
MAX_SAMPLE_SEGMENTS = 2_000_000


def _check_range(key, value, spec, shown):
    lo, hi, lo_open, hi_open = spec.range
    bad = (value < lo or value > hi or (lo_open and value == lo) or (hi_open and value == hi)
           or not math.isfinite(value))
    if bad:
        suffix = "" if spec.dimension == "dimensionless" else f" (in SI, {spec.dimension})"
        finite = "" if math.isfinite(value) else "a finite value "
        raise CaseError(f"{key} = {_show(shown)} is out of range: allowed {finite}"
                        f"{spec.allowed()}{suffix}")


def _show(value):
    """A value for a message: repr, control characters escaped, at most 80 characters."""
    return shown(value)


def _read_value(key, raw, spec):
    typ = spec.type
    if typ == "quantity":
        if not isinstance(raw, str):
            if isinstance(raw, (int, float)) and not isinstance(raw, bool) and raw == 0:
                value = 0.0
            else:
                raise CaseError(f"{key} = {_show(raw)}: give a quantity with units as a "
                                f"string, e.g. \"{_example(spec.dimension)}\"")
        else:
            try:
                value = to_si(raw, spec.dimension)
            except UnitError as exc:
                raise CaseError(f"{key}: {exc}") from None
        _check_range(key, value, spec, raw)
        return value
    if typ == "number" and spec.lift_table and isinstance(raw, dict):
        return _read_lift_table(key, raw, spec)
    if typ == "number":
        if isinstance(raw, bool) or not isinstance(raw, (int, float)):
            if isinstance(raw, str):
                try:
                    value = to_si(raw, "dimensionless")
                except UnitError as exc:
                    raise CaseError(f"{key} = {_show(raw)}: a pure number is allowed "
                                    f"({exc})") from None
            else:
                raise CaseError(f"{key} = {_show(raw)}: a number is allowed")
        else:
            value = float(raw)
        _check_range(key, value, spec, raw)
        return value
    if typ == "int":
        if isinstance(raw, bool) or not isinstance(raw, int):
            raise CaseError(f"{key} = {_show(raw)}: an integer is allowed")
        _check_range(key, raw, spec, raw)
        return raw
    if typ == "bool":
        if not isinstance(raw, bool):
            raise CaseError(f"{key} = {_show(raw)}: true or false is allowed")
        return raw
    if typ == "str":
        if not isinstance(raw, str):
            raise CaseError(f"{key} = {_show(raw)}: a string is allowed")
        if len(raw) > 4096 or "\0" in raw:
            raise CaseError(f"{key} = {_show(raw)}: a string of at most 4096 characters "
                            "without NUL is allowed")
        return raw
    if typ == "choice":
        if raw not in spec.choices:
            raise CaseError(f"{key} = {_show(raw)}: allowed values are "
                            + ", ".join(f'"{c}"' for c in spec.choices))
        return raw
    if typ == "list":
        if not isinstance(raw, list) or (spec.length and len(raw) != spec.length):
            raise CaseError(f"{key} = {_show(raw)}: a list of {spec.length or 'some'} numbers "
                            "is allowed")
        if len(raw) > 1000:
            raise CaseError(f"{key}: a list of {len(raw)} entries; at most 1000 are allowed")
        if not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in raw):
            raise CaseError(f"{key} = {_show(raw)}: every entry must be a number")
        if not all(math.isfinite(v) for v in raw):
            raise CaseError(f"{key} = {_show(raw)}: every entry must be a finite number")
        return [float(v) for v in raw]
    if typ == "pair":
        if not isinstance(raw, list) or len(raw) != 2:
            raise CaseError(f"{key} = {_show(raw)}: a list of two values [low, high] is allowed")
        sub = replace(spec, type="quantity" if spec.dimension != "dimensionless" else "number")
        lo = _read_value(f"{key}[0]", raw[0], sub)
        hi = _read_value(f"{key}[1]", raw[1], sub)
        if not lo < hi:
            raise CaseError(f"{key} = {_show(raw)}: the low bound must be below the high bound")
        return (lo, hi)
    raise AssertionError(typ)


#: Section lift coefficients a lift table may span.
LIFT_TABLE_RANGE = (-1.0, 10.0)


def _read_lift_table(key, raw, spec):
    """A constant tabulated over the section lift coefficient,
    ``{ lift_coefficient = [...], value = [...] }``."""
    from mdao.physics.lift_table import LiftTable

    form = "{ lift_coefficient = [0.3, 0.6, 0.9], value = [...] }"
    if set(raw) != {"lift_coefficient", "value"}:
        raise CaseError(f"{key} = {_show(raw)}: a lift table has exactly the keys lift_coefficient and "
                        f"value, e.g. {form}")
    cl, val = raw["lift_coefficient"], raw["value"]
    for name, seq in (("lift_coefficient", cl), ("value", val)):
        if not isinstance(seq, list) or not seq or not all(
                isinstance(v, (int, float)) and not isinstance(v, bool) for v in seq):
            raise CaseError(f"{key}.{name} = {_show(seq)}: a list of numbers is allowed, "
                            f"e.g. {form}")
    if len(cl) > 1000:
        raise CaseError(f"{key}: a lift table of {len(cl)} rows; at most 1000 are allowed")
    if len(cl) < 2 or len(cl) != len(val):
        raise CaseError(f"{key}: a lift table needs at least two lift coefficients and one value "
                        f"for each; got {len(cl)} lift coefficients and {len(val)} values")
    cl_spec = Spec("number", low=LIFT_TABLE_RANGE[0], high=LIFT_TABLE_RANGE[1])
    for i, v in enumerate(cl):
        _check_range(f"{key}.lift_coefficient[{i}]", float(v), cl_spec, v)
    if any(b <= a for a, b in zip(cl, cl[1:])):
        raise CaseError(f"{key}.lift_coefficient = {_show(cl)}: the lift coefficients must increase "
                        "strictly")
    for i, v in enumerate(val):
        _check_range(f"{key}.value[{i}]", float(v), spec, v)
    return LiftTable(tuple(cl), tuple(val))


def _example(dimension):
    return {"length": "0.5 m", "speed": "40 m/s", "time": "1 h", "pressure": "500 Pa",
            "angle": "3 deg", "rotational_speed": "30000 rpm", "specific_power": "2 kW/kg",
            "areal_density": "1.5 kg/m**2"}.get(dimension, "1")


def _key_text(key):
    """A key the user typed, for messages: as it is when printable and short, else escaped."""
    return key if isinstance(key, str) and key.isprintable() and len(key) <= 60 else _show(key)


def _read_table(name, raw, schema, errors=None):
    """Read one table against its schema. With ``errors`` (a list), every key's error is
    appended there (the key then left out) instead of raising the first."""
    if not isinstance(raw, dict):
        raise CaseError(f"[{name}] must be a table, got {_show(raw)}")
    found = []
    for old in sorted(set(raw)):
        if f"{name}.{old}" in RENAMED:
            found.append(CaseError(f"{name}.{old} is no longer a case key: it is now "
                                   f"{RENAMED[name + '.' + old]} (same meaning and value)"))
    for key in sorted(set(raw) - set(schema) - {k for k in raw if f"{name}.{k}" in RENAMED}):
        found.append(CaseError(f"{name}.{_key_text(key)}: unknown key; allowed keys in [{name}] "
                               "are " + ", ".join(sorted(schema))))
    out = {}
    for key, spec in schema.items():
        full = f"{name}.{key}"
        try:
            if key in raw:
                out[key] = _read_value(full, raw[key], spec)
            elif spec.default is REQUIRED:
                raise CaseError(f"{full} is missing (required)")
            else:
                out[key] = spec.default
        except CaseError as exc:
            found.append(exc)
    if found and errors is None:
        raise found[0]
    if errors is not None:
        errors.extend(found)
    return out


@dataclass
class Case:
    """A validated case, every value in SI (see docs/case-files.md)."""

    title: str
    wing: dict
    slot: dict
    duct: dict
    fan: dict
    airfoil: dict
    propulsion: dict
    segments: list
    optimize: dict
    review: dict
    mass: dict
    validity: dict = field(default_factory=dict)
    #: The aircraft around the wing (``[aircraft]``; its values None when the case has none).
    aircraft: dict = field(default_factory=dict)
    uncertainty: dict = field(default_factory=dict)
    calibration: dict = None
    path: Path = None
    text: str = ""
    #: Where a segment lies outside the validated ranges (only with ``[validity] extrapolate``).
    extrapolation: list = field(default_factory=list)
    #: Whether the case gives a ``[mass]`` table (with ``[aircraft]``: the fan is sized).
    mass_given: bool = False

    @property
    def high_lift(self):
        """Per segment: is it a high-lift segment (``kind = "high-lift"``)?"""
        return np.array([s["kind"] == "high-lift" for s in self.segments], bool)

    @property
    def sizes_fan(self):
        """Whether the fan is sized across the mission: ``[aircraft]`` and ``[mass]`` given, the
        rated shaft power a design variable and the blowing system's mass in every segment."""
        return self.has_aircraft and self.mass_given

    @property
    def design_keys(self):
        """Case keys whose value is only the optimizer's start, the optimization moving them:
        ``slot.ratio`` with ``slot.ratio_bounds`` given and apart, ``duct.fan_diameter`` with
        ``duct.fan_diameter_bounds`` given and apart."""
        return tuple(key for key, bounds in (
            ("slot.ratio", self.slot["ratio_bounds"]),
            ("duct.fan_diameter", self.duct.get("fan_diameter_bounds")))
            if bounds is not None and bounds[1] > bounds[0])

    @property
    def blowing(self):
        """Per segment: does the fan run?"""
        return np.array([s["blowing"] for s in self.segments], bool)

    @property
    def has_aircraft(self):
        """Whether the case describes the aircraft around the wing (an ``[aircraft]`` table)."""
        return bool(self.aircraft) and self.aircraft.get("mass") is not None

    @property
    def segment_names(self):
        """The segments' names, in case order."""
        return [s["name"] for s in self.segments]

    @property
    def objective_segment(self):
        """The segment whose net power is the objective (``"segment:NAME"``), or None when the
        objective is the mission energy."""
        objective = self.optimize["objective"]
        if objective.startswith(SEGMENT_OBJECTIVE):
            return objective[len(SEGMENT_OBJECTIVE):]
        return None

    def value(self, key):
        """Value at a case key path: ``"duct.jet_loss_factor"`` or ``"segment.cruise.speed"``."""
        parts = key.split(".")
        if parts[0] == "segment":
            return self._segment(parts[1], key)[parts[2]]
        table = getattr(self, parts[0], None)
        if not isinstance(table, dict) or parts[1] not in table:
            raise CaseError(f"{key}: no such case key")
        return table[parts[1]]

    def _segment(self, name, key):
        for seg in self.segments:
            if seg["name"] == name:
                return seg
        raise CaseError(f"{key}: no segment named {name!r}; segments are "
                        + ", ".join(self.segment_names))

    def replace(self, values):
        """A copy with ``{key path: value}`` replaced (values in SI)."""
        new = copy.deepcopy(self)
        for key, val in values.items():
            parts = key.split(".")
            if parts[0] == "segment":
                new._segment(parts[1], key)[parts[2]] = val
            else:
                getattr(new, parts[0])[parts[1]] = val
        return new


def load_case(path):
    """Read, validate and convert a TOML case file.

    Parameters
    ----------
    path : str or Path
        The case file.

    Returns
    -------
    Case
        Every value in SI units.

    Raises
    ------
    CaseError
        For any bad input, naming the key, the value and what is allowed.
    """
    text = read_text(path, MAX_CASE_BYTES, CaseError, "case file")
    path = Path(path)
    raw = _parse_toml(text, path.name)
    return parse_case(raw, base=path.parent, path=path, text=text)


def _parse_toml(text, name):
    """TOML text to a dict; CaseError (naming the file ``name``) when it is not TOML."""
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(f"{shown_path(name)} is not valid TOML: {exc}") from None
    except RecursionError:
        raise CaseError(f"{shown_path(name)}: tables or arrays nested too deep to read") from None


def parse_case(raw, base=Path("."), path=None, text=""):
    """Validate a case given as a dict (as TOML reads it); see :func:`load_case`.

    Independent errors (every key of every table, the title, the segments' names) are reported
    together, one per line, up to :data:`mdao.case.errors.MAX_ERRORS`; the cross-field checks
    run when the fields they need read fine.
    """
    where = shown_path(Path(path).name) if path is not None else "the case"
    if not isinstance(raw, dict):
        raise CaseError(f"{where}: a case is a TOML table of tables")
    errors = []
    for key in sorted(set(raw) - TOP_LEVEL, key=str):
        errors.append(CaseError(f"{_key_text(key)}: unknown top-level key; allowed: "
                                + ", ".join(sorted(TOP_LEVEL))))
    title = raw.get("title")
    if title is None or (isinstance(title, str) and not title.strip()):
        errors.append(CaseError("title is missing (required: a one-line description of the "
                                "case)"))
    elif not isinstance(title, str):
        errors.append(CaseError(f"title = {_show(title)}: title must be a string (a one-line "
                                "description of the case)"))
    elif len(title) > MAX_TITLE or not title.isprintable():
        errors.append(CaseError(f"title = {_show(title)}: one line of at most {MAX_TITLE} "
                                "printable characters is allowed (no newlines or control "
                                "characters)"))
    raw = copy.deepcopy(raw)
    calibration = None
    if "calibration" in raw:
        try:
            calibration = _apply_calibration(raw, base)
        except CaseError as exc:  # the case's other keys depend on the fragment's: stop here
            raise CaseError.joined(errors + [exc], where) from None
    tables = {}
    for name, schema in SCHEMA.items():
        try:
            tables[name] = _read_table(name, raw.get(name, {}), schema, errors)
        except CaseError as exc:
            errors.append(exc)
    segs = raw.get("segment")
    segments = []
    if not isinstance(segs, list) or not segs:
        errors.append(CaseError("segment is missing: give at least one [[segment]] table"))
    elif len(segs) > MAX_SEGMENTS:
        errors.append(CaseError(f"segment: {len(segs)} [[segment]] tables; at most "
                                f"{MAX_SEGMENTS} are allowed"))
    else:
        for i, seg in enumerate(segs):
            try:
                segments.append(_read_table(f"segment[{i}]", seg, SEGMENT, errors))
            except CaseError as exc:
                errors.append(exc)
                continue
            name = segments[-1].get("name")
            if isinstance(name, str) and not _good_name(name):
                errors.append(CaseError(
                    f"segment[{i}].name = {_show(name)}: a name of 1 to {MAX_NAME} printable "
                    "characters without dots is allowed (names are used in key paths "
                    "\"segment.NAME.speed\")"))
        names = [s.get("name") for s in segments]
        dup = sorted({n for n in names if isinstance(n, str) and names.count(n) > 1})
        if dup:
            errors.append(CaseError(f"segment.name = {_show(dup[0])} is used twice; names must "
                                    "be unique"))
    if errors and calibration is not None:
        errors = [_from_fragment(exc, calibration) for exc in errors]
    if errors:
        raise CaseError.joined(errors, where)
    case = Case(title=title, segments=segments, calibration=calibration, path=path,
                text=text, mass_given=isinstance(raw.get("mass"), dict), **tables)
    _check_all(case, raw, base, where)
    return case


def _from_fragment(exc, calibration):
    """Name the calibration fragment in an error about a constant that came from it."""
    message = str(exc)
    for key in calibration["constants"]:
        if message.startswith(key + " ") or message.startswith(key + "."):
            return CaseError(f"{message} (from the calibration fragment "
                             f"{shown_path(calibration['file'])})")
    return exc


def _good_name(name):
    """A segment name usable in a key path: 1 to MAX_NAME printable characters, no dot."""
    return 0 < len(name.strip()) and len(name) <= MAX_NAME and name.isprintable() \
        and "." not in name


def _check_all(case, raw, base, where):
    """The cross-field checks. The first needs every model's fields (it also fits a fan map
    from its points file) and stops at its error; the next ones are independent and report
    together; the last need the segments' lift coefficients and run when those are sound."""
    try:
        _check_consistency(case, base)
    except CaseError as exc:
        raise CaseError.joined([exc], where) from None
    errors = []
    for check in (lambda: _check_aircraft(case, raw), lambda: _check_high_lift(case),
                  lambda: _check_unused(case, raw), lambda: _check_segment_lift(case),
                  lambda: _check_fan_fit(case), lambda: _check_fan_span(case),
                  lambda: _check_samples(case)):
        try:
            check()
        except CaseError as exc:
            errors.append(exc)
    if errors:
        raise CaseError.joined(errors, where)
    _check_lift_tables(case)
    case.extrapolation = _check_validity(case)
    case.uncertainty = _read_uncertainty(raw.get("uncertainty", {}), case)


def _check_fan_span(case):
    """The fans sit side by side along the blown span, each serving a slot of width
    ``blown_span / fans``: a fan wider than its share does not fit (fans * fan_diameter <=
    blown_span). Checked where a fan diameter is used (geometric duct or fan map); with
    ``duct.fan_diameter_bounds`` for the smallest diameter allowed."""
    d = case.duct
    if d["fan_diameter"] is None:
        return
    span, fans = case.wing["blown_span"], d["fans"]
    bounds = d["fan_diameter_bounds"]
    smallest = bounds[0] if bounds is not None else d["fan_diameter"]
    if fans * smallest > span * (1 + 1e-12):
        what = ("the smallest of duct.fan_diameter_bounds" if bounds is not None
                else "duct.fan_diameter")
        raise CaseError(f"duct.fans = {fans}: {fans} fans of {smallest * 1e3:g} mm ({what}) "
                        f"need {fans * smallest:g} m of span, wing.blown_span is {span:g} m; "
                        "allowed: fans * fan_diameter <= blown_span")


def _check_samples(case):
    """Monte Carlo samples times segments within :data:`MAX_SAMPLE_SEGMENTS` (memory)."""
    n, m = case.review["samples"], len(case.segments)
    if n * m > MAX_SAMPLE_SEGMENTS:
        raise CaseError(f"review.samples = {n}: with {m} segments that is {n * m} sample "
                        f"evaluations; at most {MAX_SAMPLE_SEGMENTS} (samples x segments) are "
                        f"allowed, so that the review fits in memory: at most "
                        f"{MAX_SAMPLE_SEGMENTS // m} samples here")


def _apply_calibration(raw, base):
    table = raw.pop("calibration")
    if not isinstance(table, dict) or set(table) != {"file"} or not isinstance(table["file"], str):
        raise CaseError(f"calibration = {table!r}: allowed is a table with one key, file = \"PATH\"")
    shown_file = _show(table["file"])
    if "\0" in table["file"] or len(table["file"]) > 4096:
        raise CaseError(f"calibration.file = {shown_file}: a path without NUL characters, at "
                        "most 4096 characters, is allowed")
    try:
        fpath = (base / table["file"]).resolve()
    except (OSError, RuntimeError, ValueError) as exc:  # a symlink loop, a bad path
        raise CaseError(f"calibration.file = {shown_file}: cannot resolve the path "
                        f"({type(exc).__name__})") from None
    try:
        missing = not fpath.exists()
    except OSError:
        missing = False  # let the reader name what is wrong
    if missing:
        raise CaseError(f"calibration.file = {shown_file}: no such file "
                        f"({shown_path(fpath)})")
    try:
        frag = load_fragment(fpath)
    except CaseError as exc:
        raise CaseError(f"calibration.file = {shown_file}: cannot use it ({exc})") from None
    for key, value in frag["constants"].items():
        section, name = key.split(".")
        target = raw.setdefault(section, {})
        if not isinstance(target, dict):
            raise CaseError(f"[{section}] must be a table, got {_show(target)}")
        if name in target:
            raise CaseError(f"{key} is set both in the case and in the calibration "
                            f"{shown_file}; remove one")
        target[name] = value
    validity = frag.get("validity", {})
    cmu = validity.get("momentum_coefficient_range")
    if cmu is not None and "momentum_coefficient_range" not in raw.setdefault("airfoil", {}):
        raw["airfoil"]["momentum_coefficient_range"] = list(cmu)
    frag["file"] = str(fpath)
    return frag


def _check_map_efficiency(f):
    """A fan map's efficiency must stay in (0, 1] over its flow range (the parabola is least at
    an end of the range and largest at its peak, when the peak lies inside)."""
    from mdao.physics.fan import map_efficiency

    low, high = f["flow_coefficient_range"]
    peak = f["peak_flow_coefficient"]
    if not low <= peak <= high:
        raise CaseError(f"fan.peak_flow_coefficient = {peak:g} is outside fan.flow_coefficient_"
                        f"range = [{low:g}, {high:g}]; allowed: a peak inside the map's range")
    phi = np.array([low, high, min(max(peak, low), high)])
    eta = map_efficiency(phi, f["peak_efficiency"], f["peak_flow_coefficient"],
                         f["efficiency_falloff"])
    worst = int(np.argmin(eta))
    if not eta[worst] > 0:
        raise CaseError(f"fan map: the efficiency falls to {eta[worst]:.3g} at flow coefficient "
                        f"{phi[worst]:.4g}, inside fan.flow_coefficient_range = [{low:g}, {high:g}] "
                        f"(fan.peak_flow_coefficient = {f['peak_flow_coefficient']:g}, "
                        f"fan.efficiency_falloff = {f['efficiency_falloff']:g}); allowed: "
                        "an efficiency in (0, 1] over the whole range")


def validity_ranges(case):
    """The validated ranges that the segments must stay in: ``{quantity: (low, high, where)}``
    for the chord Reynolds number and the flight speed, from the case's ``[validity]`` table,
    else from its calibration fragment."""
    fragment = (case.calibration or {}).get("validity", {})
    out = {}
    for key in ("reynolds_range", "speed_range", "lift_coefficient_range"):
        if case.validity.get(key) is not None:
            out[key] = (*case.validity[key], f"validity.{key}")
        elif fragment.get(key) is not None:
            out[key] = (*fragment[key], f"the calibration {case.calibration['file']}")
    return out


def segment_reynolds(case):
    """Reynolds number on the chord of each segment, ISA at its altitude, [-]."""
    from mdao.physics.atmosphere import isa

    alt = np.array([s["altitude"] for s in case.segments])
    speed = np.array([s["speed"] for s in case.segments])
    state = isa(alt)
    return state.density * speed * case.wing["chord"] / state.viscosity


def segment_lift(case):
    """Lift coefficient of each segment: from the ``[aircraft]`` table (ISA dynamic pressure,
    :func:`mdao.physics.aircraft.flight_condition`), else as each segment gives it
    (``lift_coefficient``; NaN where it does not), [-]."""
    from mdao.physics.aircraft import flight_condition
    from mdao.physics.atmosphere import isa

    if not case.has_aircraft:
        return np.array([np.nan if s["lift_coefficient"] is None else s["lift_coefficient"]
                         for s in case.segments])

    alt = np.array([s["altitude"] for s in case.segments])
    speed = np.array([s["speed"] for s in case.segments])
    climb = np.array([s["climb_rate"] for s in case.segments])
    a = case.aircraft
    q = 0.5 * isa(alt).density * speed ** 2
    return flight_condition(a["mass"], a["wing_area"], a["zero_lift_drag"], a["aspect_ratio"],
                            a["span_efficiency"], climb, q, speed).lift_coefficient


def _check_segment_lift(case):
    """A segment's own lift coefficient and the ``[aircraft]`` table would be two answers."""
    given = [s["name"] for s in case.segments if s["lift_coefficient"] is not None]
    if given and case.has_aircraft:
        raise CaseError(f"segment {given[0]!r}: lift_coefficient is given and [aircraft] too; "
                        "the aircraft's weight gives the lift coefficient, remove one")


def _check_high_lift(case):
    """A high-lift segment needs the aircraft (its lift coefficient), the clean section's
    maximum lift, and the fan running."""
    for seg in case.segments:
        if seg["kind"] != "high-lift":
            continue
        where = f"segment {seg['name']!r}: kind = \"high-lift\""
        if not case.has_aircraft:
            raise CaseError(f"{where} needs the [aircraft] table (its weight gives the lift "
                            "coefficient the blown section must reach)")
        if case.airfoil["max_lift_clean"] is None:
            raise CaseError(f"{where} needs airfoil.max_lift_clean (the section's maximum "
                            "lift coefficient without blowing)")
        if not seg["blowing"]:
            raise CaseError(f"{where} with blowing = false: a high-lift segment blows")
    if case.airfoil["max_lift_clean"] is not None and not case.high_lift.any():
        raise CaseError("airfoil.max_lift_clean is given but no segment has kind = "
                        "\"high-lift\"; remove it or mark the take-off or landing segment")


def fan_fit_limit(case):
    """The largest fan diameter that fits: ``duct.max_fan_thickness_fraction`` times the
    section's thickness (``wing.thickness_ratio`` times the chord) [m]; None without a
    thickness."""
    t = case.wing.get("thickness_ratio")
    if t is None:
        return None
    return case.duct["max_fan_thickness_fraction"] * t * case.wing["chord"]


def _check_fan_fit(case):
    """The fan diameter's bounds need a fan diameter in them and a model that uses it; a fixed
    fan must fit in the wing's thickness."""
    d = case.duct
    bounds = d["fan_diameter_bounds"]
    if bounds is not None:
        if d["fan_diameter"] is None:
            raise CaseError("duct.fan_diameter_bounds needs duct.fan_diameter (the start value)")
        if not bounds[0] <= d["fan_diameter"] <= bounds[1]:
            raise CaseError(f"duct.fan_diameter = {d['fan_diameter'] * 1e3:g} mm is outside "
                            f"duct.fan_diameter_bounds = [{bounds[0] * 1e3:g}, "
                            f"{bounds[1] * 1e3:g}] mm")
    limit = fan_fit_limit(case)
    if limit is None or d["fan_diameter"] is None:
        return
    where = (f"duct.max_fan_thickness_fraction = {d['max_fan_thickness_fraction']:g} of the "
             f"thickness (wing.thickness_ratio = {case.wing['thickness_ratio']:g} x chord "
             f"{case.wing['chord']:g} m) allows {limit * 1e3:.4g} mm")
    if bounds is not None and bounds[1] > bounds[0]:
        if bounds[0] > limit:
            raise CaseError(f"duct.fan_diameter_bounds = [{bounds[0] * 1e3:g}, "
                            f"{bounds[1] * 1e3:g}] mm: no fan in them fits in the wing; {where}")
    elif d["fan_diameter"] > limit * (1 + 1e-12):
        raise CaseError(f"duct.fan_diameter = {d['fan_diameter'] * 1e3:g} mm does not fit in "
                        f"the wing: {where}")


def lift_tables(case):
    """``{case key path: LiftTable}`` of the constants the case tabulates over the lift
    coefficient, for the models it uses."""
    from mdao.physics.lift_table import LiftTable

    return {p.key: case.value(p.key) for p in chain_parameters(case.duct["model"],
                                                               case.fan["model"])
            if p.lift_table and isinstance(case.value(p.key), LiftTable)}


def _check_lift_tables(case):
    """A lift table needs every segment's lift coefficient, inside the table."""
    tables = lift_tables(case)
    if not tables:
        return
    lift = segment_lift(case)
    for key, table in tables.items():
        lo, hi = table.range
        for seg, c in zip(case.segments, lift):
            if np.isnan(c):
                raise CaseError(f"{key} is a lift table, but segment {seg['name']!r} has no lift "
                                "coefficient; give [aircraft] (its weight gives every segment's) "
                                "or [[segment]] lift_coefficient")
            if not table.contains(c):
                raise CaseError(f"segment {seg['name']!r}: lift coefficient {c:.4g} is outside "
                                f"the lift table of {key} (lift coefficients {lo:g} to {hi:g}); "
                                "extend the table or change the segment")


def _check_validity(case):
    """Every segment inside the validated Reynolds and speed ranges, else a CaseError naming
    segment, quantity, value and range; with ``[validity] extrapolate = true`` the list of
    the same findings instead (they travel to every output)."""
    values = {"reynolds_range": ("Reynolds number on the chord", segment_reynolds(case), ""),
              "speed_range": ("speed", np.array([s["speed"] for s in case.segments]), " m/s")}
    ranges = validity_ranges(case)
    if "lift_coefficient_range" in ranges:
        lift = segment_lift(case)
        missing = [s["name"] for s, c in zip(case.segments, lift) if np.isnan(c)]
        if missing:
            raise CaseError(f"validity.lift_coefficient_range: segment {missing[0]!r} has no lift "
                            "coefficient; give [aircraft] (its weight gives every segment's) "
                            "or [[segment]] lift_coefficient")
        values["lift_coefficient_range"] = ("lift coefficient", lift, "")
    found = []
    for key, (low, high, where) in ranges.items():
        label, vals, unit = values[key]
        for seg, v in zip(case.segments, vals):
            if not low <= v <= high:
                found.append(f"segment {seg['name']!r}: {label} {v:.4g}{unit} is outside "
                             f"[{low:.4g}, {high:.4g}]{unit} of {where}")
    if found and not case.validity["extrapolate"]:
        raise CaseError(found[0] + "; the model is not validated there (set [validity] "
                        "extrapolate = true to run anyway, with every output marked)")
    return found


def _check_unused(case, raw):
    """Refuse a model parameter that the case gives but its models do not use (it would be
    ignored without a word)."""
    d, f = case.duct["model"], case.fan["model"]
    for p in PARAMETERS:
        if p.per_segment or not isinstance(raw.get(p.table), dict) or p.field not in raw[p.table]:
            continue
        if not p.used_by(d, f, case.has_aircraft):
            raise CaseError(f"{p.key} is given but not used with duct.model = \"{d}\" and "
                            f"fan.model = \"{f}\" ({p.description}); remove it or change the "
                            "model")


def _check_aircraft(case, raw):
    """An ``[aircraft]`` table gives all of its required keys; a segment's ``climb_rate`` needs
    it, and stays below the segment's speed (sin(gamma) = climb_rate / V)."""
    given = isinstance(raw.get("aircraft"), dict) and bool(raw["aircraft"])
    needed = [p for p in CHAIN_PARAMETERS if p.aircraft and not p.per_segment
              and p.default is REQUIRED]
    if given:
        for p in needed:
            if case.aircraft[p.field] is None:
                raise CaseError(f"{p.key} is missing (required when the case has an [aircraft] "
                                f"table: {p.description})")
    for i, seg in enumerate(raw.get("segment", [])):
        if not isinstance(seg, dict) or "climb_rate" not in seg:
            continue
        name = case.segments[i]["name"]
        if not given:
            raise CaseError(f"segment {name!r}: climb_rate is given, but the case has no "
                            "[aircraft] table (mass, wing_area, zero_lift_drag, aspect_ratio, "
                            "span_efficiency); add it or remove climb_rate")
        rate, speed = case.segments[i]["climb_rate"], case.segments[i]["speed"]
        if not abs(rate) < speed:
            raise CaseError(f"segment {name!r}: climb_rate = {rate:g} m/s: allowed is a rate "
                            f"of climb smaller in magnitude than the speed {speed:g} m/s")


def _check_consistency(case, base):
    d, f, s = case.duct, case.fan, case.slot
    geometric = d["model"] == "geometric"
    if geometric:
        for key in ("fan_diameter", "transition_length"):
            if d[key] is None:
                raise CaseError(f"duct.{key} is missing (required when duct.model = \"geometric\")")
        if s["suction_ratio"] is None:
            raise CaseError("slot.suction_ratio is missing (required when duct.model = \"geometric\")")
        if d["jet_loss_factor"] is not None:
            raise CaseError("duct.jet_loss_factor is set, but duct.model = \"geometric\" builds it "
                            "from the geometry; use duct.extra_loss to adjust it")
    elif d["jet_loss_factor"] is None:
        raise CaseError("duct.jet_loss_factor is missing (required when duct.model = \"lumped\")")
    if f["model"] == "constant":
        if f["efficiency"] is None:
            raise CaseError("fan.efficiency is missing (required when fan.model = \"constant\")")
    else:
        if d["fan_diameter"] is None:
            raise CaseError("duct.fan_diameter is missing (required when fan.model = \"map\")")
        if f["points_file"] is not None:
            _fit_fan_points(case, base)
        for key in ("pressure_coefficients", "peak_efficiency", "peak_flow_coefficient",
                    "efficiency_falloff", "flow_coefficient_range", "max_speed"):
            if f[key] is None:
                raise CaseError(f"fan.{key} is missing (required when fan.model = \"map\" "
                                "without a points_file)")
        if f["pressure_coefficients"][0] <= 0:
            raise CaseError(f"fan.pressure_coefficients = {f['pressure_coefficients']!r}: the "
                            "first coefficient (shut-off pressure coefficient) must be > 0")
        _check_map_efficiency(f)
    for p in chain_parameters(d["model"], f["model"], per_segment=False):
        if p.default is REQUIRED and case.value(p.key) is None:
            raise CaseError(f"{p.key} is missing (required when duct.model = \"{d['model']}\" "
                            f"and fan.model = \"{f['model']}\": {p.description})")
    if f["min_pressure_rise"] >= f["max_pressure_rise"]:
        raise CaseError(f"fan.min_pressure_rise = {f['min_pressure_rise']:g} Pa must be below "
                        f"fan.max_pressure_rise = {f['max_pressure_rise']:g} Pa")
    ratio, bounds = s["ratio"], s["ratio_bounds"]
    valid = (case.calibration or {}).get("validity", {}).get("slot_ratio_range")
    if valid is not None:
        where = f"the calibrated slot ratio range [{valid[0]:g}, {valid[1]:g}] of {case.calibration['file']}"
        if bounds is None:
            if not valid[0] <= ratio <= valid[1]:
                raise CaseError(f"slot.ratio = {ratio!r} is outside {where}")
        else:
            low, high = max(bounds[0], valid[0]), min(bounds[1], valid[1])
            if low >= high:
                raise CaseError(f"slot.ratio_bounds = {list(bounds)!r} do not overlap {where}")
            s["ratio_bounds"] = bounds = (low, high)
            s["ratio"] = ratio = min(max(ratio, low), high)
    if bounds is not None and not bounds[0] <= ratio <= bounds[1]:
        raise CaseError(f"slot.ratio = {ratio!r} is outside slot.ratio_bounds = {list(bounds)!r}")
    chord = case.wing["chord"]
    low_ratio = bounds[0] if bounds is not None else ratio
    high_ratio = bounds[1] if bounds is not None else ratio
    if high_ratio * chord < s["min_height"]:
        raise CaseError(f"slot.min_height = {s['min_height'] * 1e3:g} mm cannot be met: the largest "
                        f"slot ratio {high_ratio:g} on a {chord:g} m chord gives "
                        f"{high_ratio * chord * 1e3:g} mm")
    if bounds is None and low_ratio * chord < s["min_height"]:
        raise CaseError(f"slot.ratio = {ratio!r} gives a slot below slot.min_height")
    lo, hi = case.airfoil["momentum_coefficient_range"]
    for seg in case.segments:
        c = seg["momentum_coefficient"]
        if c is not None and not lo <= c <= hi:
            raise CaseError(f"segment {seg['name']!r}: momentum_coefficient = {c!r} is outside "
                            f"airfoil.momentum_coefficient_range = [{lo:g}, {hi:g}]")
    if not case.blowing.any():
        raise CaseError("segment.blowing: no segment has blowing = true; nothing to optimize")
    obj = case.optimize["objective"]
    if obj != "mission-energy":
        if not obj.startswith(SEGMENT_OBJECTIVE) or case.objective_segment not in case.segment_names:
            raise CaseError(f"optimize.objective = {obj!r}: allowed are \"mission-energy\" or "
                            f"\"segment:NAME\" with NAME one of " + ", ".join(case.segment_names))
        if not case.segments[case.segment_names.index(case.objective_segment)]["blowing"]:
            raise CaseError(f"optimize.objective = {obj!r}: that segment has blowing = false")
    if case.review["fan_efficiencies"] is not None:
        if not all(0 < e <= 1 for e in case.review["fan_efficiencies"]):
            raise CaseError(f"review.fan_efficiencies = {case.review['fan_efficiencies']!r}: each "
                            "must be in (0, 1]")


#: Columns of a fan points file: SI unit, dimensionality, meaning.
FAN_POINT_COLUMNS = {
    "volume_flow": ("m^3/s", "[length] ** 3 / [time]", "volume flow of one fan"),
    "pressure_rise": ("Pa", "[mass] / [length] / [time] ** 2", "fan total-pressure rise"),
    "speed": ("revolution/s", "1 / [time]", "shaft speed (rpm or rev/s)"),
    "efficiency": ("", "dimensionless", "fan efficiency"),
    "electrical_power": ("W", "[length] ** 2 * [mass] / [time] ** 3", "electrical input power"),
    "density": ("kg/m^3", "[mass] / [length] ** 3", "air density"),
}


def _fit_fan_points(case, base):
    """Fit the fan map from a CSV of measured points (columns with units in brackets)."""
    from mdao.physics import fan

    f = case.fan
    fpath = base / f["points_file"]
    try:
        cols = read_table(fpath, FAN_POINT_COLUMNS, CaseError)
    except CaseError as exc:
        raise CaseError(f"fan.points_file {_show(f['points_file'])}: {exc}") from None
    except OSError as exc:
        raise CaseError(f"fan.points_file {_show(f['points_file'])}: cannot read it "
                        f"({exc.strerror})") from None
    for need in ("volume_flow", "pressure_rise", "speed"):
        if need not in cols:
            raise CaseError(f"fan.points_file {_show(f['points_file'])}: column {need!r} is missing")
    if ("efficiency" in cols) == ("electrical_power" in cols):
        raise CaseError(f"fan.points_file {_show(f['points_file'])}: give exactly one of the columns "
                        "'efficiency' or 'electrical_power'")
    density = cols.get("density", np.full_like(cols["speed"], 1.225))
    try:
        fmap, _ = fan.fit_points(cols["volume_flow"], cols["pressure_rise"], cols["speed"], density,
                                 case.duct["fan_diameter"], efficiency=cols.get("efficiency"),
                                 electrical_power=cols.get("electrical_power"),
                                 motor_efficiency=f["motor_efficiency"])
    except ValueError as exc:
        raise CaseError(f"fan.points_file {_show(f['points_file'])}: {exc}") from None
    for key in ("pressure_coefficients", "peak_efficiency", "peak_flow_coefficient",
                "efficiency_falloff", "flow_coefficient_range"):
        if f[key] is not None:
            raise CaseError(f"fan.{key} is given and fan.points_file too; give one of them")
        value = getattr(fmap, key)
        if not np.all(np.isfinite(np.asarray(value, float))):
            raise CaseError(f"fan.points_file {_show(f['points_file'])}: the fitted "
                            f"fan.{key} is not finite; check the points")
        f[key] = list(map(float, value)) if key == "pressure_coefficients" else (
            tuple(map(float, value)) if key == "flow_coefficient_range" else float(value))


def _read_uncertainty(raw, case):
    if not isinstance(raw, dict):
        raise CaseError(f"uncertainty = {raw!r}: a table of \"key.path\" = {{ distribution = ..., ... }}")
    out = {}
    for key, spec in raw.items():
        try:
            if not _key_text(key) == key:
                raise KeyError(key)
            base = case.value(key)
        except (CaseError, KeyError, IndexError):
            raise CaseError(f"uncertainty.\"{_key_text(key)}\": not a case key path (e.g. "
                            "\"airfoil.drag_per_momentum\" or \"segment.NAME.speed\")") from None
        try:
            declared = parameter(key)
        except KeyError:
            declared = None
        if declared is not None and declared.lift_table and not isinstance(base, (int, float)):
            raise CaseError(f"uncertainty.\"{key}\": {key} is a lift table; an uncertainty "
                            "applies to a constant given as one number")
        if (declared is None or not declared.uncertain or base is None
                or not declared.used_by(case.duct["model"], case.fan["model"])):
            allowed = ", ".join(p.key for p in CHAIN_PARAMETERS if p.uncertain)
            raise CaseError(f"uncertainty.\"{key}\": only model parameters the case uses can be "
                            f"uncertain ({allowed}; per segment as \"segment.NAME.speed\")")
        if key in case.design_keys:
            raise CaseError(f"uncertainty.\"{key}\": {key} is a design variable of this case "
                            f"({key}_bounds given): its value is only the optimizer's start; "
                            f"remove its uncertainty, or fix it by removing {key}_bounds")
        if not isinstance(spec, dict) or spec.get("distribution") not in DISTRIBUTIONS:
            raise CaseError(f"uncertainty.\"{key}\" = {_show(spec)}: give distribution = "
                            + " or ".join(f'"{d}"' for d in DISTRIBUTIONS))
        need = DISTRIBUTIONS[spec["distribution"]]
        extra = set(spec) - set(need) - {"distribution"}
        if extra or any(k not in spec for k in need):
            raise CaseError(f"uncertainty.\"{key}\": a {spec['distribution']} distribution takes "
                            + ", ".join(need))
        vals = {}
        dimension = dimension_of(key)
        for k in need:
            v = spec[k]
            if isinstance(v, str):
                v = _quantity_like(key, k, v)
            elif (dimension != "dimensionless" and isinstance(v, (int, float))
                  and not isinstance(v, bool) and v != 0):
                raise CaseError(f"uncertainty.\"{key}\".{k} = {_show(v)}: {key} is a "
                                f"{dimension.replace('_', ' ')}; give the spread with its unit "
                                f"as a string, e.g. \"{_example(dimension)}\"")
            if isinstance(v, bool) or not isinstance(v, (int, float)):
                raise CaseError(f"uncertainty.\"{key}\".{k} = {_show(v)}: a number is allowed")
            if not math.isfinite(v):
                raise CaseError(f"uncertainty.\"{key}\".{k} = {_show(v)}: a finite number "
                                "is allowed")
            vals[k] = float(v)
        if spec["distribution"] == "normal" and not vals["sd"] > 0:
            raise CaseError(f"uncertainty.\"{key}\".sd = {vals['sd']!r}: must be > 0")
        if spec["distribution"] == "uniform" and not vals["low"] < vals["high"]:
            raise CaseError(f"uncertainty.\"{key}\": low must be below high")
        out[key] = {"distribution": spec["distribution"], **vals}
    return out


def _quantity_like(key, sub, text):
    dimension = dimension_of(key)
    try:
        return to_si(text, dimension)
    except UnitError as exc:
        raise CaseError(f"uncertainty.\"{key}\".{sub}: {exc}") from None
