"""The case file's schema: every key with its type, unit, default and description.

Pydantic models of the YAML file, before units are converted; :mod:`trainopt.case.loading`
validates a file against them and builds the SI :class:`~trainopt.case.loading.Case`.
``docs/case.md`` is rendered from them by :func:`schema_markdown`.
"""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, ConfigDict, Field

Quantity = str | float | int
LeastFlowRuleName = Literal["surge_line", "speed_line_peak", "larger"]
"""Values of ``least_flow_rule`` (:class:`trainopt.machines.maps.LeastFlowRule`)."""


class _Schema(BaseModel):
    model_config = ConfigDict(extra="forbid", populate_by_name=True)


class SiteSchema(_Schema):
    """Where the station is."""

    elevation: Quantity = Field("0 m", description="Site elevation above sea level [length], "
                                "e.g. '350 m'; sets atmospheric pressure for gauge units, "
                                "which need it (or atmospheric_pressure) stated.")
    atmospheric_pressure: Quantity | None = Field(None, description="Local atmospheric "
                                                  "pressure [pressure]; overrides elevation.")
    ambient_temperature: Quantity = Field("15 degC", description="Ambient air temperature "
                                          "[temperature]; sets gas-turbine power.")


class GasSchema(_Schema):
    """The gas: a composition here, or a file holding one."""

    file: str | None = Field(None, description="YAML file with a 'composition', relative to "
                             "the case file.")
    composition: dict[str, Quantity] | None = Field(None, description="Component to mole "
                                                    "fraction [-] or percentage ('4.5 %').")
    equation_of_state: Literal["gerg", "pr"] = Field("gerg", description="'gerg' (GERG-2008 "
                                                     "parameters, default) or 'pr'.")


class HeaderSchema(_Schema):
    """A header's pressure (and, at suction, temperature)."""

    pressure: Quantity = Field(..., description="Header pressure [pressure], e.g. '44 bar'.")
    temperature: Quantity | None = Field(None, description="Header temperature "
                                         "[temperature]; required at suction.")


class CoolerSchema(_Schema):
    """A cooler after a section."""

    outlet_temperature: Quantity = Field(..., description="Gas temperature leaving the "
                                         "cooler [temperature].")
    pressure_drop: Quantity = Field("0 bar", description="Gas-side pressure drop [pressure "
                                    "difference].")


class SectionSchema(_Schema):
    """One compressor section of a train."""

    name: str = Field(..., description="Section name, unique in its train.")
    map: str = Field(..., description="Map file (CSV or YAML), relative to the case file.")
    speed_ratio: Quantity = Field(1.0, description="Section speed over shaft speed [-].")
    surge_control_offset: Quantity = Field("10 %", description="Surge control line offset, "
                                           "fraction of surge flow at the same head [-].")
    least_flow_rule: LeastFlowRuleName | None = Field(
        None, description="Which line sets the least flow before the surge control offset: "
        "'surge_line' (the vendor's surge line), 'speed_line_peak' (the peak of the speed "
        "line, a stability rule for parallel units on flat curves) or 'larger'; default the "
        "case's (docs/maps.md).")
    max_discharge_temperature: Quantity | None = Field(None, description="Discharge "
                                                       "temperature limit [temperature].")
    cooler: CoolerSchema | None = Field(None, description="Cooler after this section.")
    driver: dict | None = Field(None, description="The section's own driver, for series "
                                "sections that do not share a shaft (then every section "
                                "has one and the unit has none); docs/series.md.")
    speed_min: Quantity | None = Field(None, description="Least speed [speed] of a "
                                       "separately driven section.")
    speed_max: Quantity | None = Field(None, description="Largest speed [speed] of a "
                                       "separately driven section.")
    rated_speed: Quantity | None = Field(None, description="Rated speed [speed] of a "
                                         "separately driven section.")
    max_power: Quantity | None = Field(None, description="Extra shaft-power limit [power] of "
                                       "a separately driven section.")


class CommitmentSchema(_Schema):
    """A unit's start-stop rules, read by the commitment schedule (docs/schedule.md)."""

    start_cost: Quantity = Field(0, description="Cost of one start [currency of "
                                 "economics], wear and purge, e.g. 1500.")
    start_fuel: Quantity = Field("0 GJ", description="Fuel energy burnt by one start "
                                 "[energy, LHV], charged at the fuel price, e.g. '40 GJ'.")
    cold_start_cost: Quantity | None = Field(None, description="Cost of a start after the "
                                             "unit was stopped longer than cold_after "
                                             "[currency], instead of start_cost; default "
                                             "the same as start_cost.")
    cold_after: Quantity | None = Field(None, description="Stopped time after which a "
                                        "start is a cold start [time], e.g. '8 h'.")
    stop_cost: Quantity = Field(0, description="Cost of one stop [currency].")
    startup_time: Quantity = Field("0 h", description="Time from a start until the unit "
                                   "carries flow [time]; it carries none meanwhile.")
    min_up_time: Quantity = Field("0 h", description="Least running time after a start "
                                  "[time].")
    min_down_time: Quantity = Field("0 h", description="Least stopped time after a stop "
                                    "[time].")
    max_starts_per_day: int | None = Field(None, description="Most starts in any 24 h "
                                           "[-]; no limit by default.")
    initial_state: Literal["running", "stopped"] | None = Field(
        None, description="State when the schedule begins; default running unless the "
        "unit is offline.")
    hours_in_state: Quantity = Field("1000 h", description="How long the unit has been "
                                     "in its initial state [time].")


class CalibrationSchema(_Schema):
    """Degradation factors of a worn unit against its as-new map (``trainopt calibrate``)."""

    head_factor: Quantity = Field(1.0, description="Head at a given speed and flow over the "
                                  "as-new map's [-].")
    efficiency_factor: Quantity = Field(1.0, description="Efficiency over the as-new map's "
                                        "[-].")
    flow_factor: Quantity = Field(1.0, description="Capacity shift: flows of the speed line "
                                  "and its surge and stonewall points times this [-].")
    head_factor_uncertainty: Quantity | None = Field(None, description="Standard error of "
                                                     "head_factor [-].")
    efficiency_factor_uncertainty: Quantity | None = Field(None, description="Standard "
                                                           "error of efficiency_factor [-].")
    flow_factor_uncertainty: Quantity | None = Field(None, description="Standard error of "
                                                     "flow_factor [-].")
    period: str | None = Field(None, description="Period of the history the factors come "
                               "from, e.g. '2023-01-01 to 2023-12-31'.")
    points: int | None = Field(None, description="Steady points the fit used.")
    excluded_rows: int | None = Field(None, description="History rows excluded (reasons in "
                                      "the calibration report).")


class UnitSchema(_Schema):
    """A compressor unit (one map) or train (several sections) with its driver."""

    name: str = Field(..., description="Unit name, unique in the station.")
    map: str | None = Field(None, description="Map file of a single-section unit.")
    sections: list[SectionSchema] | None = Field(None, description="Sections in flow order "
                                                 "(instead of 'map').")
    driver: dict | None = Field(None, description="Driver: 'kind' and its fields "
                                "(docs/drivers.md); omit it when every section has its own.")
    speed_min: Quantity | None = Field(None, description="Least shaft speed [speed]; default "
                                       "the larger of the driver's and the map's.")
    speed_max: Quantity | None = Field(None, description="Largest shaft speed [speed]; default "
                                       "the smaller of the driver's, the map's and 105 % of "
                                       "rated_speed.")
    rated_speed: Quantity | None = Field(None, description="Rated speed [speed]; maximum "
                                         "continuous speed is 105 % of it (API 617 practice).")
    surge_control_offset: Quantity = Field("10 %", description="Surge control line offset "
                                           "of a single-section unit [-].")
    least_flow_rule: LeastFlowRuleName | None = Field(
        None, description="Which line sets the least flow before the surge control offset: "
        "'surge_line' (the vendor's surge line), 'speed_line_peak' (the peak of the speed "
        "line, a stability rule for parallel units on flat curves) or 'larger'; default the "
        "case's (docs/maps.md).")
    max_discharge_temperature: Quantity | None = Field(None, description="Discharge "
                                                       "temperature limit [temperature].")
    max_power: Quantity | None = Field(None, description="Extra shaft-power limit [power].")
    mechanical_loss: Quantity = Field("1 %", description="Bearing and seal losses, fraction "
                                      "of gas power [-].")
    status: Literal["available", "offline", "must_run"] = Field("available", description=
                                                                "Whether the optimiser may "
                                                                "start or stop it.")
    group: str | None = Field(None, description="Identical units share a group name.")
    commitment: CommitmentSchema = Field(default_factory=CommitmentSchema,
                                         description="Start-stop rules for schedules.")
    calibration: CalibrationSchema | None = Field(None, description="Degradation factors "
                                                  "applied to every section's map "
                                                  "(docs/calibration.md).")


class EconomicsSchema(_Schema):
    """Prices and emission factors for the cost objective and the CO2 report."""

    currency: str = Field("USD", description="Currency label for reports.")
    fuel_price: Quantity = Field("4 /GJ", description="Fuel-gas price per GJ (LHV), "
                                 "e.g. '4.2 /GJ'.")
    electricity_price: Quantity = Field("70 /MWh", description="Electricity price per MWh.")
    co2_fuel: Quantity = Field("56.1 kg/GJ", description="CO2 per fuel energy (IPCC 2006 "
                               "default for natural gas, 56,100 kg/TJ).")
    co2_electricity: Quantity = Field("0.4 kg/kWh", description="CO2 per electrical energy.")


class InterstageHeaderSchema(_Schema):
    """A header joining two groups of parallel units in series (docs/series.md)."""

    upstream_units: list[str] = Field(..., description="Units taking gas from the suction "
                                      "header into this header.")
    downstream_units: list[str] = Field(..., description="Units taking gas from this header "
                                        "to the discharge header.")
    cooler: CoolerSchema = Field(..., description="Cooler between this header and the "
                                 "downstream units' suction: its outlet temperature is their "
                                 "suction temperature, its pressure drop lies below the header "
                                 "pressure.")
    pressure_min: Quantity | None = Field(None, description="Lowest header pressure "
                                          "[pressure] the search may choose.")
    pressure_max: Quantity | None = Field(None, description="Highest header pressure "
                                          "[pressure] the search may choose.")


class CaseSchema(_Schema):
    """A station case: site, gas, headers, demand, units and objective."""

    name: str = Field("station", description="Case name for reports.")
    site: SiteSchema = Field(default_factory=SiteSchema, description="Site data.")
    gas: GasSchema = Field(..., description="Gas composition.")
    suction: HeaderSchema = Field(..., description="Suction header.")
    discharge: HeaderSchema = Field(..., description="Discharge (delivery) header.")
    demand: Quantity = Field(..., description="Station throughput: mass, actual or standard "
                             "volume flow, e.g. '300 MMSCFD', '75 kg/s'.")
    least_flow_rule: LeastFlowRuleName = Field(
        "surge_line", description="Default least-flow rule of every unit: 'surge_line', "
        "'speed_line_peak' or 'larger' (docs/maps.md); a unit or section may override it.")
    objective: Literal["shaft_power", "energy_input", "cost"] = Field(
        "shaft_power", description="What the optimiser minimises.")
    economics: EconomicsSchema = Field(default_factory=EconomicsSchema,
                                       description="Prices and CO2 factors.")
    units: list[UnitSchema] = Field(..., min_length=1, description="Compressor units/trains.")
    throttle: Literal["allowed", "not_allowed"] = Field(
        "not_allowed", description="'allowed': where the pressure ratio is so low that a "
        "single-section unit's head lies below its minimum-speed line, it may run at minimum "
        "speed and a throttle valve at its discharge drops the excess pressure (the lost "
        "power is reported); 'not_allowed' (default): such a unit cannot run at those flows.")
    interstage_header: InterstageHeaderSchema | None = Field(
        None, description="A shared interstage header between two groups of units; "
        "without it every unit runs between the suction and discharge headers.")


def schema_markdown() -> str:
    """The case schema as Markdown tables (key, type, default, description)."""
    lines = []
    for model in (CaseSchema, SiteSchema, GasSchema, HeaderSchema, UnitSchema, SectionSchema,
                  CoolerSchema, CommitmentSchema, InterstageHeaderSchema, EconomicsSchema,
                  CalibrationSchema):
        lines += [f"### {model.__name__.removesuffix('Schema')}", "", model.__doc__ or "", "",
                  "| key | required | default | description |", "|---|---|---|---|"]
        for name, info in model.model_fields.items():
            required = "yes" if info.is_required() else "no"
            default = "" if info.is_required() else repr(info.get_default(
                call_default_factory=False)) if info.default_factory is None else "(section)"
            lines.append(f"| `{name}` | {required} | {default} | {info.description} |")
        lines.append("")
    return "\n".join(lines)
