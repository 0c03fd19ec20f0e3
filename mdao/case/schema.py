"""The case file's schema: every key, its type, dimension, default and allowed range.

The model parameters' entries are built from their declarations in :mod:`mdao.parameters` (one
default and one range per parameter, everywhere); the entries here are the case's settings:
model choices, limits that feed the constraints (:mod:`mdao.constraints`), bounds of the design
variables, and the optimizer's, review's and mass tables' settings. docs/case-files.md describes
every key.
"""
import math
from dataclasses import dataclass

from mdao import parameters as registry

INF = math.inf
#: Marks a key that must be given.
REQUIRED = registry.REQUIRED


@dataclass(frozen=True)
class Spec:
    """How one case key is read and checked.

    ``type`` is one of ``quantity`` (a string with a unit of ``dimension``), ``number``,
    ``int``, ``bool``, ``str``, ``choice`` (one of ``choices``), ``list`` (``length`` numbers,
    any length when None) or ``pair`` (``[low, high]`` of ``dimension``). ``default`` is the value
    when the key is absent (:data:`REQUIRED`: it must be given; None: optional).
    """

    type: str
    dimension: str = "dimensionless"
    default: object = REQUIRED
    low: float = -INF
    high: float = INF
    low_open: bool = False
    high_open: bool = False
    choices: tuple = ()
    length: int = None
    #: A number that may instead be a table over the section lift coefficient.
    lift_table: bool = False

    @property
    def range(self):
        """``(low, high, low_open, high_open)``."""
        return self.low, self.high, self.low_open, self.high_open

    def allowed(self):
        """The allowed range in words, ``"(0, 1]"``."""
        left = "(" if self.low_open else "["
        right = ")" if self.high_open else "]"
        return f"{left}{self.low:g}, {self.high:g}{right}"


def quantity(dimension, default=REQUIRED, **bounds):
    """A quantity with a unit."""
    return Spec("quantity", dimension, default, **bounds)


def number(default=REQUIRED, **bounds):
    """A pure number."""
    return Spec("number", default=default, **bounds)


def pair(dimension="dimensionless", default=REQUIRED, **bounds):
    """A ``[low, high]`` pair."""
    return Spec("pair", dimension, default, **bounds)


def integer(default, low, high):
    """An integer in ``[low, high]``."""
    return Spec("int", default=default, low=low, high=high)


def choice(default, *choices):
    """One of several words."""
    return Spec("choice", default=default, choices=choices)


def _from_parameter(p):
    """The schema entry of a declared model parameter. Parameters that only some models use
    are optional here; the consistency check asks for them when the models need them."""
    if isinstance(p.example, tuple):
        return Spec("list", default=None, length=len(p.example))
    default = p.default
    if default is REQUIRED and (p.aircraft or p.duct_models != ("lumped", "geometric")
                                or p.fan_models != ("constant", "map")):
        default = None
    typ = "number" if p.dimension == "dimensionless" else "quantity"
    return Spec(typ, p.dimension, default, p.low, p.high, p.low_open, p.high_open,
                lift_table=p.lift_table)


#: Settings of each case table (not model parameters).
SETTINGS = {
    "wing": {},
    "slot": {
        "ratio_bounds": pair(default=None, low=0, high=0.2, low_open=True),
        "min_height": quantity("length", default=0.0, low=0, high=1.0),
        "max_jet_mach": number(default=0.4, low=0, high=1.0, low_open=True),
    },
    "duct": {
        "model": choice("lumped", "lumped", "geometric"),
        "fans": integer(1, 1, 1000),
        "schedule": choice("monotone-area", "monotone-area", "linear"),
        "stations": integer(33, 5, 401),
        "max_diffusion_half_angle": quantity("angle", default=math.radians(3.5), low=0,
                                             high=math.pi / 4, low_open=True),
        # each wall pair's divergence: plane-wall diffuser practice (docs/theory.md)
        "max_wall_half_angle": quantity("angle", default=math.radians(7.0), low=0,
                                        high=math.pi / 2, low_open=True, high_open=True),
        "fan_diameter_bounds": pair("length", default=None, low=0, high=10, low_open=True),
        "max_fan_thickness_fraction": number(default=0.8, low=0, high=1, low_open=True),
    },
    "fan": {
        "model": choice("constant", "constant", "map"),
        # up to 1 MPa: ten atmospheres, beyond any fan or blower of a wing
        "min_pressure_rise": quantity("pressure", default=50.0, low=0, high=1e6, low_open=True),
        "max_pressure_rise": quantity("pressure", default=30000.0, low=0, high=1e6,
                                      low_open=True),
        "compressible": Spec("bool", default=False),
        "flow_coefficient_range": pair(default=None, low=0, high=5, low_open=True),
        "max_speed": quantity("rotational_speed", default=None, low=0, high=1e4,
                              low_open=True),
        "points_file": Spec("str", default=None),
    },
    "airfoil": {
        "momentum_coefficient_range": pair(low=0, high=2.0, low_open=True),
    },
    "propulsion": {},
    "optimize": {
        "objective": Spec("str", default="mission-energy"),
        "max_iterations": integer(200, 1, 100000),
        "tolerance": number(default=1e-9, low=0, high=1e-2, low_open=True),
    },
    "review": {
        "samples": integer(2000, 10, 200_000),
        "seed": integer(12345, 0, 2**63 - 1),
        "band": number(default=0.1, low=0, high=1, low_open=True),
        "fan_efficiencies": Spec("list", default=None, length=None),
    },
    "mass": {},
    "aircraft": {
        "min_main_thrust": quantity("force", default=0.0, low=0, high=1e7),
    },
    "validity": {
        "reynolds_range": pair(default=None, low=0, high=1e10, low_open=True),
        "speed_range": pair("speed", default=None, low=0, high=400, low_open=True),
        "lift_coefficient_range": pair(default=None, low=-1.0, high=10.0),
        "extrapolate": Spec("bool", default=False),
    },
}

#: Settings of each ``[[segment]]`` table.
SEGMENT_SETTINGS = {
    "name": Spec("str"),
    "blowing": Spec("bool", default=True),
    "momentum_coefficient": number(default=None, low=0, high=2.0, low_open=True),
    "lift_coefficient": number(default=None, low=-1.0, high=10.0),
    "kind": choice("cruise", "cruise", "high-lift"),
}


def _build():
    schema = {table: {} for table in SETTINGS}
    segment = {"name": SEGMENT_SETTINGS["name"]}
    for p in registry.PARAMETERS:
        target = segment if p.per_segment else schema[p.table]
        target[p.field] = _from_parameter(p)
    for table, entries in SETTINGS.items():
        schema[table].update(entries)
    segment.update({k: v for k, v in SEGMENT_SETTINGS.items() if k != "name"})
    return schema, segment


#: ``{table: {key: Spec}}`` of every case table.
SCHEMA, SEGMENT = _build()

#: Top-level keys of a case file.
TOP_LEVEL = {"title", "segment", "calibration", "uncertainty"} | set(SCHEMA)

#: Distributions of the ``[uncertainty]`` table and the keys each takes.
DISTRIBUTIONS = {"normal": ("sd",), "uniform": ("low", "high")}


def spec_of(key):
    """Schema entry of a case key path (``"wing.chord"``, ``"segment.NAME.speed"``)."""
    parts = key.split(".")
    if parts[0] == "segment":
        return SEGMENT[parts[-1]]
    return SCHEMA[parts[0]][parts[1]]


def dimension_of(key):
    """Dimension of a numeric case key path (``"wing.chord"`` -> ``"length"``)."""
    return spec_of(key).dimension
