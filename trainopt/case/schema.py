"""The case file's schema: every key with its type, unit, default and description.

Pydantic models of the YAML file, before units are converted; :mod:`trainopt.case.loading`
validates a file against them and builds the SI :class:`~trainopt.case.loading.Case`.
``docs/case.md`` is rendered from them by :func:`schema_markdown`.
"""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, ConfigDict, Field

Quantity = str | float | int


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
    max_discharge_temperature: Quantity | None = Field(None, description="Discharge "
                                                       "temperature limit [temperature].")
    max_power: Quantity | None = Field(None, description="Extra shaft-power limit [power].")
    mechanical_loss: Quantity = Field("1 %", description="Bearing and seal losses, fraction "
                                      "of gas power [-].")
    status: Literal["available", "offline", "must_run"] = Field("available", description=
                                                                "Whether the optimiser may "
                                                                "start or stop it.")
    group: str | None = Field(None, description="Identical units share a group name.")
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
    objective: Literal["shaft_power", "energy_input", "cost"] = Field(
        "shaft_power", description="What the optimiser minimises.")
    economics: EconomicsSchema = Field(default_factory=EconomicsSchema,
                                       description="Prices and CO2 factors.")
    units: list[UnitSchema] = Field(..., min_length=1, description="Compressor units/trains.")
    interstage_header: InterstageHeaderSchema | None = Field(
        None, description="A shared interstage header between two groups of units; "
        "without it every unit runs between the suction and discharge headers.")


def schema_markdown() -> str:
    """The case schema as Markdown tables (key, type, default, description)."""
    lines = []
    for model in (CaseSchema, SiteSchema, GasSchema, HeaderSchema, UnitSchema, SectionSchema,
                  CoolerSchema, InterstageHeaderSchema, EconomicsSchema, CalibrationSchema):
        lines += [f"### {model.__name__.removesuffix('Schema')}", "", model.__doc__ or "", "",
                  "| key | required | default | description |", "|---|---|---|---|"]
        for name, info in model.model_fields.items():
            required = "yes" if info.is_required() else "no"
            default = "" if info.is_required() else repr(info.get_default(
                call_default_factory=False)) if info.default_factory is None else "(section)"
            lines.append(f"| `{name}` | {required} | {default} | {info.description} |")
        lines.append("")
    return "\n".join(lines)
