"""Station case files: loading and validation, SI out.

A case is a YAML file (see ``docs/case.md``, rendered from :mod:`trainopt.case.schema` by
:func:`~trainopt.case.schema.schema_markdown`). Every quantity is a string with its unit,
converted once here.
Errors name the key path (``units[1].driver.rated_power``) and quote the schema's
description of the field.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from pydantic import BaseModel, ValidationError

from trainopt.case.gas_file import read_yaml
from trainopt.case.schema import (
    CalibrationSchema,
    CaseSchema,
    CoolerSchema,
    GasSchema,
    InterstageHeaderSchema,
    Quantity,
    SectionSchema,
    UnitSchema,
)
from trainopt.case.unit_rules import unit_rules
from trainopt.errors import InputError
from trainopt.machines.degradation import Degradation, DegradationWarning, degraded_map
from trainopt.machines.drivers import GasTurbine, driver_from_dict
from trainopt.machines.train import (
    Cooler,
    Section,
    SectionDrive,
    Train,
    UnitStatus,
    speed_limits_from_rated,
)
from trainopt.physics.gas import Gas
from trainopt.physics.units import (
    STANDARD_ATMOSPHERE,
    Flow,
    Kind,
    atmospheric_pressure,
    parse_flow,
    parse_quantity,
)


@dataclass(frozen=True)
class Economics:
    """Prices [currency/J] and CO2 factors [kg/J]."""

    currency: str
    fuel_price: float
    electricity_price: float
    co2_fuel: float
    co2_electricity: float


@dataclass(frozen=True)
class InterstageHeader:
    """A header joining an upstream and a downstream group of parallel units.

    Attributes
    ----------
    upstream_units, downstream_units : tuple of str
        Unit names of each group.
    cooler : Cooler
        Between the header and the downstream suction.
    pressure_min, pressure_max : float
        Range of header pressures [Pa] the search may choose.
    """

    upstream_units: tuple[str, ...]
    downstream_units: tuple[str, ...]
    cooler: Cooler
    pressure_min: float
    pressure_max: float


@dataclass(frozen=True)
class Case:
    """A validated station case, SI inside.

    Attributes
    ----------
    name : str
    path : Path
    gas : Gas
    atmospheric_pressure : float
        [Pa].
    ambient_temperature : float
        [K].
    suction_pressure, discharge_pressure : float
        Header pressures [Pa].
    suction_temperature : float
        [K].
    demand : Flow
        As the user stated it; :meth:`demand_mass_flow` converts.
    objective : str
    economics : Economics
    trains : tuple of Train
    interstage_header : InterstageHeader or None
    throttle : bool
        Whether a single-section unit may run at its minimum speed with a discharge
        throttle where its head lies below its minimum-speed line.
    unit_rules : dict of str to UnitRules
        Per unit, its start-stop rules (:mod:`trainopt.case.unit_rules`).
    """

    name: str
    path: Path
    gas: Gas
    atmospheric_pressure: float
    ambient_temperature: float
    suction_pressure: float
    suction_temperature: float
    discharge_pressure: float
    demand: Flow
    objective: str
    economics: Economics
    trains: tuple[Train, ...]
    extra: dict = field(default_factory=dict, compare=False)
    interstage_header: InterstageHeader | None = None
    throttle: bool = False
    unit_rules: dict = field(default_factory=dict, compare=False)

    def demand_mass_flow(self, demand: Flow | None = None) -> float:
        """Demand as mass flow [kg/s] (standard volumes at their reference conditions)."""
        flow = demand or self.demand
        return self.gas.mass_flow(flow, self.gas.state(self.suction_pressure,
                                                       self.suction_temperature))

    def train(self, name: str) -> Train:
        """The unit or train of that name."""
        for t in self.trains:
            if t.name == name:
                return t
        raise InputError("unit", f"no unit named '{name}'",
                         f"use one of {', '.join(t.name for t in self.trains)}")


def _price(text: Quantity, per: str, field_name: str) -> float:
    """A price such as '4.2 /GJ' to currency per joule."""
    s = str(text).replace(" ", "")
    scale = {"/GJ": 1e-9, "/MWh": 1 / 3.6e9, "/kWh": 1 / 3.6e6, "/MMBtu": 1 / 1.055056e9}
    for suffix, factor in scale.items():
        if s.endswith(suffix):
            try:
                value = float(s[: -len(suffix)])
            except ValueError:
                break
            if value < 0:
                raise InputError(field_name, f"price {value:g} is negative")
            return value * factor
    raise InputError(field_name, f"cannot read the price {text!r}",
                     f"write a number per energy, e.g. '4.2 {per}' (/GJ, /MWh, /kWh, /MMBtu)")


def _co2(text: Quantity, field_name: str) -> float:
    s = str(text).replace(" ", "")
    for suffix, factor in {"kg/GJ": 1e-9, "kg/MWh": 1 / 3.6e9, "kg/kWh": 1 / 3.6e6,
                           "t/MWh": 1e3 / 3.6e9}.items():
        if s.endswith(suffix):
            try:
                return float(s[: -len(suffix)]) * factor
            except ValueError:
                break
    raise InputError(field_name, f"cannot read the CO2 factor {text!r}",
                     "write e.g. '56.1 kg/GJ' or '0.4 kg/kWh'")


def _validation_error(exc: ValidationError, path: Path) -> InputError:
    err = exc.errors()[0]
    loc = ".".join(f"[{p}]" if isinstance(p, int) else str(p) for p in err["loc"])
    loc = loc.replace(".[", "[")
    problem = err["msg"]
    if err["type"] == "extra_forbidden":
        problem = "is not a key of the case schema (docs/case.md)"
    elif err["type"] == "missing":
        problem = "is missing"
    return InputError(f"{path}: {loc}", problem, _describe(err["loc"]))


def _describe(loc) -> str | None:
    model = CaseSchema
    description = None
    for part in loc:
        if isinstance(part, int):
            continue
        fields = getattr(model, "model_fields", {})
        if part not in fields:
            if fields:  # an unknown key: quote the keys of this level
                return f"schema: the keys allowed here are {', '.join(fields)}"
            break
        info = fields[part]
        description = info.description
        ann = info.annotation
        args = getattr(ann, "__args__", ()) or (ann,)
        model = next((a for a in args if isinstance(a, type) and issubclass(a, BaseModel)),
                     next((getattr(a, "__args__", (None,))[0] for a in args
                           if getattr(a, "__args__", None)), None))
    return description and f"schema: {description}"


def load_case(path: str | Path, load_map=None, *, calibrated: bool = True) -> Case:
    """Read and validate a station case file.

    Parameters
    ----------
    path : str or Path
        The YAML case.
    load_map : callable, optional
        ``load_map(path) -> CompressorMap``; :func:`trainopt.machines.maps.load_map` by default.
    calibrated : bool, optional
        Apply each unit's ``calibration`` factors to its maps (default); False gives the
        as-new maps.

    Returns
    -------
    Case
    """
    from trainopt.machines.maps import load_map as default_loader

    load_map = _once_per_file(load_map or default_loader)
    path = Path(path)
    data = read_yaml(path)
    try:
        schema = CaseSchema.model_validate(data)
    except ValidationError as exc:
        raise _validation_error(exc, path) from None
    if not calibrated:
        for unit in schema.units:
            unit.calibration = None
    return _build(schema, path, load_map)


def _once_per_file(load_map):
    """Wrap a map loader so that units naming one file share one map object."""
    maps: dict[Path, object] = {}

    def load(path: Path):
        key = Path(path).resolve()
        if key not in maps:
            maps[key] = load_map(path)
        return maps[key]

    return load


def _build(s: CaseSchema, path: Path, load_map) -> Case:
    here = path.parent
    p = f"{path}: "
    atm = (parse_quantity(s.site.atmospheric_pressure, Kind.PRESSURE, p + "site.atmospheric_"
                          "pressure") if s.site.atmospheric_pressure is not None
           else atmospheric_pressure(parse_quantity(s.site.elevation, Kind.LENGTH,
                                                    p + "site.elevation")))
    ambient = parse_quantity(s.site.ambient_temperature, Kind.TEMPERATURE,
                             p + "site.ambient_temperature")
    gas = _gas(s.gas, here, p)
    # gauge pressures need a stated site: sea level is not assumed for them
    gauge_atm = atm if {"elevation", "atmospheric_pressure"} & s.site.model_fields_set else None
    p1 = parse_quantity(s.suction.pressure, Kind.PRESSURE, p + "suction.pressure",
                        atmospheric=gauge_atm)
    if s.suction.temperature is None:
        raise InputError(p + "suction.temperature", "is missing", "give e.g. '20 degC'")
    t1 = parse_quantity(s.suction.temperature, Kind.TEMPERATURE, p + "suction.temperature")
    p2 = parse_quantity(s.discharge.pressure, Kind.PRESSURE, p + "discharge.pressure",
                        atmospheric=gauge_atm)
    if not p2 > p1:
        raise InputError(p + "discharge.pressure", f"{p2 / 1e3:.0f} kPa is not above suction "
                         f"{p1 / 1e3:.0f} kPa", "check the header pressures")
    gas.check_gas_phase(p1, t1, p + "suction")
    demand = parse_flow(s.demand, p + "demand")
    if demand.value < 0:
        raise InputError(p + "demand", f"{s.demand} is negative", "give a positive throughput")
    e = s.economics
    econ = Economics(e.currency, _price(e.fuel_price, "/GJ", p + "economics.fuel_price"),
                     _price(e.electricity_price, "/MWh", p + "economics.electricity_price"),
                     _co2(e.co2_fuel, p + "economics.co2_fuel"),
                     _co2(e.co2_electricity, p + "economics.co2_electricity"))
    names = [u.name for u in s.units]
    for n in names:
        if names.count(n) > 1:
            raise InputError(p + "units", f"the name '{n}' is used twice", "make names unique")
    trains = tuple(_train(u, i, here, p, load_map, atm, s.least_flow_rule)
                   for i, u in enumerate(s.units))
    header = (None if s.interstage_header is None
              else _interstage_header(s.interstage_header, names, p, p1, p2, atm))
    rules = {u.name: unit_rules(u.commitment, f"{p}units[{i}].commitment", e.currency)
             for i, u in enumerate(s.units)}
    return Case(s.name, path, gas, atm, ambient, p1, t1, p2, demand, s.objective, econ, trains,
                extra={"demand": str(s.demand)}, interstage_header=header,
                throttle=s.throttle == "allowed", unit_rules=rules)


def _interstage_header(h: InterstageHeaderSchema, names: list[str], p: str, p1: float,
                       p2: float, atm: float) -> InterstageHeader:
    key = p + "interstage_header"
    for side in ("upstream_units", "downstream_units"):
        group = getattr(h, side)
        if not group:
            where = "upstream" if side.startswith("up") else "downstream"
            raise InputError(f"{key}.{side}", f"the shared header has nothing {where}",
                             f"list the units that run {where} of it")
        for n in group:
            if n not in names:
                raise InputError(f"{key}.{side}", f"no unit named '{n}'",
                                 f"use one of {', '.join(names)}")
    both = set(h.upstream_units) & set(h.downstream_units)
    if both:
        raise InputError(key, f"unit '{sorted(both)[0]}' is both upstream and downstream",
                         "list each unit on one side only")
    missing = [n for n in names if n not in h.upstream_units and n not in h.downstream_units]
    if missing:
        raise InputError(key, f"unit '{missing[0]}' is on neither side of the shared header",
                         "list every unit under upstream_units or downstream_units")
    cooler = _cooler(h.cooler, key + ".cooler")
    lo = (parse_quantity(h.pressure_min, Kind.PRESSURE, key + ".pressure_min", atmospheric=atm)
          if h.pressure_min is not None else p1 * 1.02)
    hi = (parse_quantity(h.pressure_max, Kind.PRESSURE, key + ".pressure_max", atmospheric=atm)
          if h.pressure_max is not None else (p2 + cooler.pressure_drop) * 0.98)
    if not p1 < lo < hi:
        raise InputError(key + ".pressure_min", f"{lo / 1e3:.0f} kPa is not between the suction "
                         f"pressure {p1 / 1e3:.0f} kPa and pressure_max {hi / 1e3:.0f} kPa",
                         "give a header pressure range between the station's headers")
    if not hi - cooler.pressure_drop < p2:
        raise InputError(key + ".pressure_max", f"{hi / 1e3:.0f} kPa less the cooler's pressure "
                         f"drop is not below the discharge pressure {p2 / 1e3:.0f} kPa",
                         "give a header pressure below the discharge header's")
    return InterstageHeader(tuple(h.upstream_units), tuple(h.downstream_units), cooler, lo, hi)


def _cooler(c: CoolerSchema, key: str) -> Cooler:
    return Cooler(
        parse_quantity(c.outlet_temperature, Kind.TEMPERATURE, key + ".outlet_temperature"),
        parse_quantity(c.pressure_drop, Kind.PRESSURE_DIFFERENCE, key + ".pressure_drop"))


def _gas(g: GasSchema, here: Path, p: str) -> Gas:
    from trainopt.case.gas_file import load_gas
    from trainopt.physics.gas import EquationOfState

    eos = EquationOfState.GERG2008 if g.equation_of_state == "gerg" else \
        EquationOfState.PENG_ROBINSON
    if g.file:
        return load_gas(here / g.file, eos)
    if g.composition is None:
        raise InputError(p + "gas", "give either 'file' or 'composition'")
    return Gas.from_composition(g.composition, eos, p + "gas.composition")


def _fraction(text: Quantity, field_name: str) -> float:
    return parse_quantity(text, Kind.DIMENSIONLESS, field_name)


def _speed_range(driver, maps_and_ratios, rated, smin, smax, key: str) -> tuple[float, float]:
    """Speed range [1/s]: the driver's, the maps' (over their ratios) and 105 % of rated."""
    lo = max([driver.speed_min] + [m.speed_min / r for m, r in maps_and_ratios])
    hi = min([driver.speed_max] + [m.speed_max / r for m, r in maps_and_ratios])
    if rated is not None:
        hi = min(hi, speed_limits_from_rated(parse_quantity(rated, Kind.SPEED,
                                                            key + ".rated_speed"))[0])
    if smin is not None:
        lo = parse_quantity(smin, Kind.SPEED, key + ".speed_min")
    if smax is not None:
        hi = parse_quantity(smax, Kind.SPEED, key + ".speed_max")
    if not lo < hi:
        raise InputError(key + ".speed_min", f"minimum speed {lo * 60:.0f} rpm is not below "
                         f"maximum {hi * 60:.0f} rpm (after the driver's and map's ranges)",
                         "check the speed limits of the driver and the map")
    return lo, hi


def _train(u: UnitSchema, i: int, here: Path, p: str, load_map, atm: float,
           rule: str = "surge_line") -> Train:
    key = f"{p}units[{i}]"
    if (u.map is None) == (u.sections is None):
        raise InputError(key, "give either 'map' (one section) or 'sections'", None)
    t_max = (parse_quantity(u.max_discharge_temperature, Kind.TEMPERATURE,
                            key + ".max_discharge_temperature")
             if u.max_discharge_temperature is not None else None)
    if u.map is not None:
        sections = (Section(u.name, _map(load_map, here / u.map, key + ".map"), 1.0,
                            _fraction(u.surge_control_offset, key + ".surge_control_offset"),
                            t_max, least_flow_rule=u.least_flow_rule or rule),)
    else:
        if not u.sections:
            raise InputError(key + ".sections", "a train needs at least one section",
                             "list its sections in flow order, each with a map")
        sections = tuple(_section(sec, j, here, key, t_max, load_map, atm,
                                  sec.least_flow_rule or u.least_flow_rule or rule)
                         for j, sec in enumerate(u.sections))
    if u.calibration is not None:
        sections = _calibrated(sections, u.calibration, key + ".calibration")
    max_power = (parse_quantity(u.max_power, Kind.POWER, key + ".max_power")
                 if u.max_power is not None else None)
    loss = _fraction(u.mechanical_loss, key + ".mechanical_loss")
    if sections[0].drive is not None:
        if u.driver is not None or any(s.drive is None for s in sections):
            raise InputError(key + ".driver", "some sections have their own driver and the "
                             "unit has one too, or some sections have none",
                             "give a driver to every section and none to the unit, or one "
                             "driver to the unit and none to the sections")
        if len(sections) != 2:
            raise InputError(key + ".sections", f"{len(sections)} separately driven sections",
                             "give two (an interstage pressure is searched between them); "
                             "put longer chains on a shared shaft or a shared header")
        first = sections[0].drive
        return Train(u.name, sections, None, first.speed_min, first.speed_max, max_power, loss,
                     UnitStatus(u.status), u.group)
    if u.driver is None:
        where = ".sections[0].driver" if u.sections else ".driver"
        raise InputError(key + where, "is missing", "give the unit's driver ('kind' and its "
                         "fields, docs/drivers.md), or one to every section")
    if any(s.drive is not None for s in sections):
        raise InputError(key + ".driver", "the unit has a driver and some sections have their "
                         "own", "give the driver to the unit only, or to every section only")
    driver = _site_driver(u.driver, atm, key + ".driver")
    lo, hi = _speed_range(driver, [(s.compressor_map, s.speed_ratio) for s in sections],
                          u.rated_speed, u.speed_min, u.speed_max, key)
    return Train(u.name, sections, driver, lo, hi, max_power, loss, UnitStatus(u.status), u.group)


def _calibrated(sections: tuple[Section, ...], c: CalibrationSchema, key: str
                ) -> tuple[Section, ...]:
    """Sections with their maps degraded by the unit's calibration factors (warned if odd)."""
    import dataclasses
    import warnings

    degradation = Degradation(*(_fraction(getattr(c, name), f"{key}.{name}") for name in
                                ("head_factor", "efficiency_factor", "flow_factor")))
    odd = degradation.outside_plausible()
    if odd:
        warnings.warn(f"{key}: {', '.join(odd)} outside 0.7-1.1: check the calibration "
                      "history and sensors before trusting this case", DegradationWarning,
                      stacklevel=4)
    return tuple(dataclasses.replace(s, compressor_map=degraded_map(s.compressor_map,
                                                                     degradation))
                 for s in sections)


def _section(sec: SectionSchema, j: int, here: Path, key: str, t_max, load_map,
             atm: float, rule: str = "surge_line") -> Section:
    k = f"{key}.sections[{j}]"
    cooler = None if sec.cooler is None else _cooler(sec.cooler, k + ".cooler")
    limit = (parse_quantity(sec.max_discharge_temperature, Kind.TEMPERATURE,
                            k + ".max_discharge_temperature")
             if sec.max_discharge_temperature is not None else t_max)
    ratio = _fraction(sec.speed_ratio, k + ".speed_ratio")
    if not ratio > 0:
        raise InputError(k + ".speed_ratio", f"{ratio:g} is not a positive ratio",
                         "give section speed / shaft speed, e.g. 1.0")
    cmap = _map(load_map, here / sec.map, k + ".map")
    drive = None
    if sec.driver is not None:
        driver = _site_driver(sec.driver, atm, k + ".driver")
        lo, hi = _speed_range(driver, [(cmap, 1.0)], sec.rated_speed, sec.speed_min,
                              sec.speed_max, k)
        power = (parse_quantity(sec.max_power, Kind.POWER, k + ".max_power")
                 if sec.max_power is not None else None)
        drive = SectionDrive(driver, lo, hi, power)
    else:
        for name in ("speed_min", "speed_max", "rated_speed", "max_power"):
            if getattr(sec, name) is not None:
                raise InputError(f"{k}.{name}", "belongs to a separately driven section",
                                 "give it on the unit, or give this section its own driver")
    return Section(sec.name, cmap, ratio, _fraction(sec.surge_control_offset,
                                                    k + ".surge_control_offset"), limit,
                   cooler, drive, rule)


def standard_elevation(pressure: float) -> float:
    """The elevation whose standard-atmosphere pressure is ``pressure`` [Pa] -> [m].

    Inverse of :func:`trainopt.physics.units.atmospheric_pressure` (ISO 2533:1975
    troposphere, ``p = 101325 (1 - 2.25577e-5 h)^5.25588``).
    """
    return (1.0 - (pressure / STANDARD_ATMOSPHERE) ** (1.0 / 5.25588)) / 2.25577e-5


def _site_driver(data, atm: float, field_name: str):
    """A driver from its case mapping; a gas turbine's elevation is the site's by default.

    A gas turbine's power scales with the ambient pressure (``site_elevation``); unless the
    driver gives its own ``site_elevation``, the site's atmospheric pressure (from
    ``site.elevation`` or ``site.atmospheric_pressure``) sets it.
    """
    if (isinstance(data, dict) and data.get("kind") == GasTurbine.kind
            and "site_elevation" not in data):
        elevation = standard_elevation(atm)
        if not -500.0 <= elevation <= 11_000.0:
            raise InputError("site.atmospheric_pressure", f"{atm / 1e3:.1f} kPa is outside the "
                             "standard atmosphere from -500 m to 11 km that sets a gas "
                             "turbine's power", f"check it, or give {field_name}.site_elevation")
        data = {**data, "site_elevation": f"{elevation:.6f} m"}
    return driver_from_dict(data, field_name)


def _map(load_map, path: Path, field_name: str):
    if not path.is_file():
        raise InputError(field_name, f"map file {path} not found", "check the path")
    return load_map(path)
