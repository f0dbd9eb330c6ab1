"""Column-by-column conversion of a history file to SI, with bad-value masks by reason.

:class:`_Reader` turns each mapped column into SI numbers once (pressures, temperatures,
flows in their basis, valve positions, availability flags, gas labels, timestamps) and
marks every missing or impossible value under its reason; the rows so marked are skipped
and counted by :func:`~trainopt.studies.history_reader.read_history`, never filled.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from trainopt.errors import InputError
from trainopt.physics.units import FlowBasis, Kind, parse_flow, parse_quantity
from trainopt.studies.history_mapping import Column, GasColumn, TimeColumn, ValveColumn

NEGATIVE_ZERO_FRACTION = 0.01
"""Negative readings down to this fraction of the column's 99th-percentile magnitude are
read as zero (meter zero drift); more negative readings are bad values [-]."""


def _linear(unit: str | None, kind: Kind, field_name: str, atmospheric: float):
    """(a, b) with SI = a x + b for numbers x written in ``unit``."""
    if unit is None:
        raise InputError(f"{field_name}.unit", "is missing", "give the unit of the numbers")
    one = parse_quantity(f"1 {unit}", kind, f"{field_name}.unit", atmospheric=atmospheric)
    two = parse_quantity(f"2 {unit}", kind, f"{field_name}.unit", atmospheric=atmospheric)
    return two - one, 2 * one - two


class _Reader:
    """Column-by-column conversion, collecting bad-value masks by reason."""

    def __init__(self, raw: pd.DataFrame, path: Path, atmospheric: float):
        self.raw, self.path, self.atm = raw, path, atmospheric
        self.bad = pd.DataFrame(index=raw.index)

    def _mark(self, reason: str, mask) -> None:
        mask = np.asarray(mask, bool)
        if mask.any():
            previous = self.bad[reason].to_numpy() if reason in self.bad else False
            self.bad[reason] = previous | mask

    def numbers(self, column: str, key: str, required: bool = True) -> np.ndarray:
        """A column's numbers; every bad one marks its row under a reason naming the column.

        Text that is not a number and non-finite values (``inf``, ``-inf``) are bad in every
        column; a blank cell is bad only in a ``required`` column (an optional meter that
        recorded nothing is left as NaN, not guessed).
        """
        text = self.raw[column]
        where = f"(column '{column}')"
        if not pd.api.types.is_numeric_dtype(text):
            text = text.astype(str).str.strip()
            empty = text.isin(["", "nan", "NaN", "None", "null", "NULL"]).to_numpy()
            values = pd.to_numeric(text.where(~empty), errors="coerce").to_numpy(float)
            unreadable = ~empty & np.isnan(values)
        else:
            values = text.to_numpy(dtype=float)
            empty = np.isnan(values)
            unreadable = np.zeros(len(values), bool)
        if required:
            self._mark(f"{key}: missing {where}", empty)
        self._mark(f"{key}: not a number {where}", unreadable)
        self._mark(f"{key}: not finite {where}", np.isinf(values))
        return np.where(np.isfinite(values), values, np.nan)

    def quantity(self, spec: Column, kind: Kind, key: str, required: bool = True) -> np.ndarray:
        a, b = _linear(spec.unit, kind, key, self.atm)
        x = a * self.numbers(spec.column, key, required) + b
        with np.errstate(invalid="ignore"):
            if kind is Kind.PRESSURE:
                self._mark(f"{key}: not a positive absolute pressure", x <= 0)
            elif kind is Kind.TEMPERATURE:
                self._mark(f"{key}: outside 150 K to 600 K", (x < 150) | (x > 600))
            else:
                x = self._negatives(x, key, spec.column)
        return x

    def _negatives(self, x: np.ndarray, key: str, column: str) -> np.ndarray:
        """Small negatives (meter drift) read as zero; larger ones mark the row."""
        finite = np.abs(x[np.isfinite(x)])
        scale = float(np.percentile(finite, 99)) if finite.size else 0.0
        with np.errstate(invalid="ignore"):
            drift = (x < 0) & (x >= -NEGATIVE_ZERO_FRACTION * scale)
            very = x < -NEGATIVE_ZERO_FRACTION * scale
        self._mark(f"{key}: negative (column '{column}')", very)
        return np.where(drift, 0.0, x)

    def flow(self, spec: Column, key: str):
        if spec.unit is None:
            raise InputError(f"{key}.unit", "is missing", "give e.g. 'Sm3/h', 't/h', 'kg/s'")
        flow = parse_flow(f"1 {spec.unit}", f"{key}.unit")
        reference = None
        if flow.basis is FlowBasis.STANDARD_VOLUME:
            reference = next(k for k, v in _references().items() if v == flow.reference)
        x = self._negatives(flow.value * self.numbers(spec.column, key), key, spec.column)
        return x, (flow.basis, reference)

    def valve(self, spec: ValveColumn, key: str) -> np.ndarray:
        unit = spec.unit if spec.unit not in (None, "") else "dimensionless"
        a, b = _linear(unit, Kind.DIMENSIONLESS, key, self.atm)
        x = a * self.numbers(spec.column, key) + b
        with np.errstate(invalid="ignore"):
            self._mark(f"{key}: outside 0 to 100 %", (x < -0.01) | (x > 1.01))
        return np.clip(x, 0.0, 1.0)

    def flag(self, spec: Column, key: str) -> np.ndarray:
        text = self.raw[spec.column].astype(str).str.strip().str.lower()
        yes = text.isin(["1", "1.0", "true", "yes", "on", "y", "t"]).to_numpy()
        no = text.isin(["0", "0.0", "false", "no", "off", "n", "f"]).to_numpy()
        self._mark(f"{key}: missing", text.isin(["", "nan", "none"]).to_numpy())
        self._mark(f"{key}: not 1/0, true/false, yes/no or on/off",
                   ~yes & ~no & ~text.isin(["", "nan", "none"]).to_numpy())
        return yes

    def labels(self, spec: GasColumn):
        text = self.raw[spec.column].astype(str).str.strip()
        known = text.isin(list(spec.compositions)).to_numpy()
        empty = text.isin(["", "nan", "None"]).to_numpy()
        self._mark("station.gas: missing", empty)
        self._mark(f"station.gas: label not in the mapping ({', '.join(spec.compositions)})",
                   ~known & ~empty)
        return text.to_numpy(), dict(spec.compositions)

    def time(self, spec: TimeColumn) -> pd.DatetimeIndex:
        text = self.raw[spec.column]
        if pd.api.types.is_datetime64_any_dtype(text):
            parsed = pd.DatetimeIndex(text)
        else:
            text = text.astype(str).str.strip()
            fmt = spec.format or "ISO8601"
            try:
                parsed = pd.DatetimeIndex(pd.to_datetime(text, format=fmt, errors="coerce"))
            except (ValueError, TypeError):
                parsed = pd.DatetimeIndex(pd.to_datetime(text, format=fmt, errors="coerce",
                                                         utc=True))
        try:
            if parsed.tz is None:
                return parsed.tz_localize(spec.timezone, ambiguous="NaT", nonexistent="NaT")
            return parsed.tz_convert(spec.timezone)
        except (KeyError, ValueError) as exc:  # zoneinfo: KeyError; offsets: ValueError
            raise InputError("time.timezone", f"'{spec.timezone}' is not a time zone "
                             f"({type(exc).__name__})", "give e.g. 'UTC' or "
                             "'Europe/Berlin'") from None


def _references() -> dict:
    from trainopt.physics.units import REFERENCE_CONDITIONS

    return REFERENCE_CONDITIONS
