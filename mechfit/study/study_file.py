"""Reading a study file (TOML, standard-library ``tomllib``) and its CSV tables.

The format is described in ``docs/study.md``. Every error names the file and the
field (``study.toml: run[3].initial.Sub``) or the table, line and column
(``data/r01.csv:7: column 'time': ...``) and says what was expected. Nothing is
dropped silently: an empty cell means "not measured" and is the only thing left out.

Examples
--------
>>> import pathlib, tempfile
>>> folder = pathlib.Path(tempfile.mkdtemp())
>>> _ = (folder / "r1.csv").write_text("time / min, P / mM\\n1, 0.5\\n2, 0.9\\n")
>>> _ = (folder / "study.toml").write_text('''
... title = "A -> P at one temperature (invented data)"
... units = { concentration = "mM", time = "min", temperature = "degC" }
... [observable.P]
... kind = "concentration"
... [[run]]
... name = "r1"
... temperature = 25
... initial = { A = 10 }
... table = "r1.csv"
... ''')
>>> study = load_study(folder / "study.toml")
>>> study.runs[0].times.tolist(), study.runs[0].initial["A"]
([60.0, 120.0], 0.01)
"""

from __future__ import annotations

import math
import os
import re
import tomllib
from collections.abc import Mapping
from pathlib import Path

import numpy as np

from mechfit.errors import StudyError
from mechfit.study import units as unitmod
from mechfit.study.observables import Observable, build_observable
from mechfit.study.priors import Prior, build_prior
from mechfit.study.study import (
    InitialScale,
    Run,
    Series,
    Study,
    TimeOffset,
    freeze_mapping,
    frozen_array,
)
from mechfit.study.tables import Table, read_table
from mechfit.study.temperature import LAWS, TemperatureLaw

TOP_KEYS = {"title", "note", "units", "temperature", "table", "run", "observable",
            "initial_rates", "temperature_law", "prior"}
RUN_KEYS = {"name", "temperature", "initial", "table", "time_offset", "initial_scale",
            "volume", "note"}
RATES_KEYS = {"table", "observable", "temperature", "initial", "name", "volume", "note"}
LAW_KEYS = {"default", "reference", "constants"}
UNIT_KINDS = {"concentration", "time", "temperature", "energy", "volume", "heat_flow"}
DEFAULT_UNITS = {"concentration": "mol/L", "time": "s", "temperature": "K",
                 "energy": "kJ/mol", "volume": "L", "heat_flow": "W"}
_NAME = re.compile(r"^[A-Za-z0-9_.\-]+$")
_SPECIES = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")
_INITIAL_COLUMN = re.compile(r"^\[([A-Za-z][A-Za-z0-9_]*)\]0$")


def _number(value, where: str, *, what: str = "a number") -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise StudyError(f"{where}: expected {what}, got {value!r}")
    if not math.isfinite(value):
        raise StudyError(f"{where}: expected a finite number, got {value!r}")
    return float(value)


def _text(value, where: str, example: str) -> str:
    if not isinstance(value, str) or not value.strip():
        raise StudyError(f"{where}: expected text such as {example}, got {value!r}")
    return value.strip()


def _check_keys(table: Mapping, allowed: set[str], where: str) -> None:
    extra = set(table) - allowed
    if extra:
        raise StudyError(f"{where}: unknown key(s) {', '.join(sorted(extra))}; expected "
                         f"{', '.join(sorted(allowed))}")


class _Loader:
    """Builds a :class:`Study` from the parsed TOML, reading tables as needed."""

    def __init__(self, path: Path, shown: str, doc: dict) -> None:
        self.path = path
        self.file = shown
        self.doc = doc
        self.folder = path.parent
        self.warnings: list[str] = []

    # ---- small pieces -------------------------------------------------------
    def units(self) -> dict[str, str]:
        raw = self.doc.get("units", {})
        if not isinstance(raw, Mapping):
            raise StudyError(f"{self.file}: units: expected a table such as "
                             "units = { concentration = \"mM\", time = \"min\" }")
        _check_keys(raw, UNIT_KINDS, f"{self.file}: units")
        out = dict(DEFAULT_UNITS)
        for kind, text in raw.items():
            unitmod.parse_unit(text, kind, where=f"{self.file}: units.{kind}")
            out[kind] = text
        return out

    def temperature(self, value, where: str) -> float:
        v = _number(value, where, what=f"a temperature in {self.u['temperature']}")
        kelvin = unitmod.to_canonical(v, self.u["temperature"], "temperature")
        if kelvin <= 0:
            raise StudyError(f"{where}: {v:g} {self.u['temperature']} is "
                             f"{kelvin:g} K, at or below absolute zero; expected a "
                             "temperature above 0 K")
        return kelvin

    def table_path(self, value, where: str) -> tuple[Path, str]:
        rel = _text(value, where, '"data/r01.csv"')
        p = Path(rel)
        full = p if p.is_absolute() else self.folder / p
        shown = os.path.normpath(os.path.join(os.path.dirname(self.file), rel))
        if not full.is_file():
            raise StudyError(f"{where}: data table '{rel}' not found (looked for {full})")
        return full, shown

    def initial(self, raw, where: str) -> dict[str, float]:
        if raw is None:
            return {}
        if not isinstance(raw, Mapping):
            raise StudyError(f"{where}: expected a table of species = concentration, "
                             "e.g. initial = { Sub = 50, Cat = 1 }")
        out = {}
        for sp, value in raw.items():
            w = f"{where}.{sp}"
            if not _SPECIES.match(sp):
                raise StudyError(f"{w}: '{sp}' is not a species name")
            v = _number(value, w, what=f"a concentration in {self.u['concentration']}")
            if v < 0:
                raise StudyError(f"{w}: negative concentration {v:g}; expected >= 0")
            out[sp] = unitmod.to_canonical(v, self.u["concentration"], "concentration")
        return out

    # ---- the study ----------------------------------------------------------
    def load(self) -> Study:
        doc = self.doc
        _check_keys(doc, TOP_KEYS, self.file)
        title = doc.get("title", self.path.stem)
        if not isinstance(title, str):
            raise StudyError(f"{self.file}: title: expected text")
        note = doc.get("note", "")
        if not isinstance(note, str):
            raise StudyError(f"{self.file}: note: expected text")
        self.u = self.units()
        self.observables = self.read_observables()
        runs = self.read_runs()
        runs += self.read_initial_rates()
        if not runs:
            raise StudyError(f"{self.file}: the study has no runs; add [[run]] tables "
                             "(or [[initial_rates]])")
        seen: dict[str, int] = {}
        for r in runs:
            if r.name in seen:
                raise StudyError(f"{self.file}: run name '{r.name}' is used twice; run "
                                 "names must be unique")
            seen[r.name] = 1
        for name in self.observables:
            if not any(name in r.series for r in runs):
                self.warnings.append(f"observable '{name}' is declared but no table has "
                                     "data for it")
        for r in runs:
            for name in r.series:
                o = self.observables[name]
                if o.kind == "heat_flow" and r.volume is None:
                    raise StudyError(f"{self.file}: run '{r.name}' has heat-flow data "
                                     f"('{name}') but no volume; add volume = ... "
                                     f"(in {self.u['volume']})")
        default, reference, laws = self.read_temperature_laws(runs)
        priors = self.read_priors()
        return Study(title=title, path=self.file, runs=tuple(runs),
                     observables=freeze_mapping(self.observables),
                     temperature_laws=freeze_mapping(laws), default_law=default,
                     reference_temperature=reference, priors=freeze_mapping(priors),
                     units=freeze_mapping(self.u), note=note,
                     warnings=tuple(self.warnings))

    def read_observables(self) -> dict[str, Observable]:
        raw = self.doc.get("observable", {})
        if not isinstance(raw, Mapping) or not raw:
            raise StudyError(f"{self.file}: no observables; declare what the tables "
                             "measure, e.g. [observable.P] with kind = \"concentration\"")
        out = {}
        for name, spec in raw.items():
            if not _SPECIES.match(name):
                raise StudyError(f"{self.file}: observable.{name}: names are letters, "
                                 "digits and underscores, starting with a letter")
            if name.endswith("_sd"):
                raise StudyError(f"{self.file}: observable.{name}: names ending in '_sd' "
                                 "are reserved for standard-deviation columns")
            out[name] = build_observable(name, spec, file=self.file, units=self.u)
        return out

    # ---- time-course runs ---------------------------------------------------
    def read_runs(self) -> list[Run]:
        raw = self.doc.get("run", [])
        if not isinstance(raw, list):
            raise StudyError(f"{self.file}: run: write each run as a [[run]] table")
        long_table = None
        if "table" in self.doc:
            full, shown = self.table_path(self.doc["table"], f"{self.file}: table")
            long_table = read_table(full, shown=shown)
            if not long_table.has("run"):
                raise StudyError(f"{shown}: the study's long table needs a 'run' column "
                                 "naming the run of each row")
        declared = []
        for i, spec in enumerate(raw, start=1):
            where = f"{self.file}: run[{i}]"
            if not isinstance(spec, Mapping):
                raise StudyError(f"{where}: expected a [[run]] table")
            _check_keys(spec, RUN_KEYS, where)
            if "name" not in spec:
                raise StudyError(f"{where}: a run needs a name, e.g. name = \"r01\"")
            name = _text(spec["name"], f"{where}.name", '"r01"')
            if not _NAME.match(name):
                raise StudyError(f"{where}.name: '{name}' may only hold letters, digits, "
                                 "'_', '-' and '.'")
            declared.append((name, where, spec))
        names = {n for n, _, _ in declared}
        long_rows: dict[str, np.ndarray] = {}
        if long_table is not None:
            labels = long_table.text("run")
            for line, label in zip(long_table.lines(), labels, strict=True):
                if label not in names:
                    raise StudyError(f"{long_table.file}:{line}: run '{label}' is not "
                                     f"declared in {self.file}; declared runs: "
                                     f"{', '.join(sorted(names)) or 'none'}")
            arr = np.array(labels)
            for n in names:
                long_rows[n] = arr == n
        runs = []
        for name, where, spec in declared:
            if "table" in spec:
                if name in long_rows and long_rows[name].any():
                    raise StudyError(f"{where}: run '{name}' has its own table and rows in "
                                     f"the long table {long_table.file}; use one of them")
                full, shown = self.table_path(spec["table"], f"{where}.table")
                table = read_table(full, shown=shown)
            elif long_table is not None:
                table = long_table.select(long_rows[name])
            else:
                raise StudyError(f"{where}: run '{name}' has no table; add "
                                 "table = \"data/NAME.csv\" (or a study-level long table "
                                 "with a 'run' column)")
            runs.append(self.time_course(name, where, spec, table))
        return runs

    def run_temperature(self, spec: Mapping, where: str) -> float:
        if "temperature" in spec:
            return self.temperature(spec["temperature"], f"{where}.temperature")
        if "temperature" in self.doc:
            return self.temperature(self.doc["temperature"], f"{self.file}: temperature")
        raise StudyError(f"{where}: no temperature; give temperature = ... (in "
                         f"{self.u['temperature']}) for the run or for the whole study")

    def volume(self, spec: Mapping, where: str) -> float | None:
        if "volume" not in spec:
            return None
        v = _number(spec["volume"], f"{where}.volume", what=f"a volume in {self.u['volume']}")
        if v <= 0:
            raise StudyError(f"{where}.volume: expected a positive volume, got {v:g}")
        return unitmod.to_canonical(v, self.u["volume"], "volume")

    def nuisance(self, name: str, spec: Mapping, where: str, initial: dict[str, float]):
        offset = None
        if "time_offset" in spec:
            raw = spec["time_offset"]
            w = f"{where}.time_offset"
            unit = self.u["time"]
            if isinstance(raw, Mapping):
                _check_keys(raw, {"value", "sd"}, w)
                value = _number(raw.get("value", 0.0), f"{w}.value")
                if "sd" not in raw:
                    raise StudyError(f"{w}: give sd (in {unit}) to fit the offset, or "
                                     "a plain number for a known shift")
                sd = _number(raw["sd"], f"{w}.sd")
                if sd <= 0:
                    raise StudyError(f"{w}.sd: expected a positive number, got {sd:g}")
                offset = TimeOffset(unitmod.to_canonical(value, unit, "time"),
                                    unitmod.to_canonical(sd, unit, "time"), f"t0__{name}")
            else:
                value = _number(raw, w, what=f"a time in {unit} or {{ value, sd }}")
                offset = TimeOffset(unitmod.to_canonical(value, unit, "time"), None,
                                    f"t0__{name}")
        scale = None
        if "initial_scale" in spec:
            raw = spec["initial_scale"]
            w = f"{where}.initial_scale"
            if not isinstance(raw, Mapping):
                raise StudyError(f"{w}: expected a table such as "
                                 "{ sd = 0.03, species = [\"Sub\"] }")
            _check_keys(raw, {"sd", "species"}, w)
            if "sd" not in raw:
                raise StudyError(f"{w}: needs sd, the relative uncertainty (0.03 for 3%)")
            sd = _number(raw["sd"], f"{w}.sd")
            if not 0 < sd < 1:
                raise StudyError(f"{w}.sd: expected a relative uncertainty between 0 and "
                                 f"1, got {sd:g}")
            species = raw.get("species", [s for s, v in initial.items() if v > 0])
            if not isinstance(species, list) or not all(isinstance(s, str) for s in species):
                raise StudyError(f"{w}.species: expected a list of species names")
            missing = [s for s in species if s not in initial]
            if missing:
                raise StudyError(f"{w}.species: {', '.join(missing)} not in the run's "
                                 "initial concentrations")
            if not species:
                raise StudyError(f"{w}: no species to scale")
            scale = InitialScale(tuple(species), sd, f"scale__{name}")
        return offset, scale

    def time_course(self, name: str, where: str, spec: Mapping, table: Table) -> Run:
        temperature = self.run_temperature(spec, where)
        initial = self.initial(spec.get("initial"), f"{where}.initial")
        if not initial:
            raise StudyError(f"{where}: run '{name}' has no initial concentrations; add "
                             "initial = { Species = value, ... }")
        offset, scale = self.nuisance(name, spec, where, initial)
        volume = self.volume(spec, where)
        if not table.rows:
            raise StudyError(f"{table.file}: run '{name}' has no data rows")
        if not table.has("time"):
            raise StudyError(f"{table.file}: no column 'time'; the columns are: "
                             f"{', '.join(table.names)} (expected e.g. 'time / min')")
        series = self.series_of(table, name, allow_rate=False)
        return self.assemble(name, temperature, initial, series, "time_course", offset,
                             scale, volume, table.file)

    def column_unit(self, table: Table, column: str, kind: str, default: str) -> str:
        col = table.column(column)
        if col.unit is None:
            return default
        unitmod.parse_unit(col.unit, kind, where=f"{table.file}: column '{col.header}'")
        return col.unit

    def times_of(self, table: Table) -> np.ndarray:
        unit = self.column_unit(table, "time", "time", self.u["time"])
        raw = table.numbers("time")
        lines = table.lines()
        for line, t in zip(lines, raw, strict=True):
            if t < 0:
                raise StudyError(f"{table.file}:{line}: column 'time': negative time "
                                 f"{t:g}; expected >= 0")
        return unitmod.to_canonical(raw, unit, "time")

    def replicates_of(self, table: Table) -> np.ndarray:
        if not table.has("replicate"):
            return np.zeros(len(table.rows), dtype=int)
        labels = table.text("replicate")
        for line, lab in zip(table.lines(), labels, strict=True):
            if lab == "":
                raise StudyError(f"{table.file}:{line}: column 'replicate' is empty")
        order = {lab: i for i, lab in enumerate(dict.fromkeys(labels))}
        return np.array([order[lab] for lab in labels], dtype=int)

    def check_order(self, table: Table, times: np.ndarray, reps: np.ndarray, run: str):
        lines = table.lines()
        for rep in np.unique(reps):
            sel = np.flatnonzero(reps == rep)
            for a, b in zip(sel[:-1], sel[1:], strict=True):
                if times[b] == times[a]:
                    raise StudyError(
                        f"{table.file}:{lines[b]}: run '{run}': time "
                        f"{table.text('time')[b]} repeats line {lines[a]}; mark repeated "
                        "measurements with a 'replicate' column")
                if times[b] < times[a]:
                    raise StudyError(
                        f"{table.file}:{lines[b]}: run '{run}': times are not sorted "
                        f"({table.text('time')[b]} after {table.text('time')[a]} on line "
                        f"{lines[a]}); sort the rows by time")

    def series_of(self, table: Table, run: str, *, allow_rate: bool,
                  times: np.ndarray | None = None, reserved: set[str] = frozenset()
                  ) -> dict[str, tuple]:
        """Raw series of a table: observable -> (times, values, sigma, reps, lines)."""
        allowed = {"time", "replicate", "run"} | set(reserved)
        obs_cols = []
        for col in table.names:
            if col in allowed:
                continue
            base = col[:-3] if col.endswith("_sd") else col
            if base not in self.observables:
                hint = " (a column NAME_sd gives standard deviations of NAME)"
                raise StudyError(
                    f"{table.file}: column '{col}' is not an observable of the study; "
                    f"declared observables: {', '.join(self.observables)}{hint}")
            if col.endswith("_sd") and not table.has(base):
                raise StudyError(f"{table.file}: column '{col}' but no column '{base}'")
            if not col.endswith("_sd"):
                obs_cols.append(col)
        if not obs_cols:
            raise StudyError(f"{table.file}: run '{run}' has no data: no observable "
                             f"column (declared observables: {', '.join(self.observables)})")
        if times is None:
            times = self.times_of(table)
            reps = self.replicates_of(table)
            self.check_order(table, times, reps, run)
        else:
            reps = self.replicates_of(table)
        lines = table.lines()
        out = {}
        for col in obs_cols:
            obs = self.observables[col]
            if (obs.kind == "initial_rate") != allow_rate:
                if allow_rate:
                    raise StudyError(f"{table.file}: column '{col}': an initial-rate table "
                                     "holds initial-rate observables only")
                raise StudyError(f"{table.file}: column '{col}' is an initial rate; give "
                                 "initial rates in an [[initial_rates]] table")
            values = table.numbers(col, missing=True)
            unit = self.column_unit(table, col, obs.quantity, obs.unit) \
                if obs.quantity else (table.column(col).unit or obs.unit)
            keep = ~np.isnan(values)
            if not keep.any():
                raise StudyError(f"{table.file}: column '{col}' has no values")
            if not obs.allow_negative:
                for line, v in zip(lines[keep], values[keep], strict=True):
                    if v < 0:
                        raise StudyError(
                            f"{table.file}:{line}: column '{col}': negative concentration "
                            f"{v:g}; expected >= 0 (set allow_negative = true in "
                            f"observable.{col} for baseline-corrected data)")
            w = f"{table.file}: column '{col}'"
            canon = np.asarray(obs.to_canonical(values[keep], unit, where=w), dtype=float)
            sigma = None
            if table.has(col + "_sd"):
                sd = table.numbers(col + "_sd", missing=True)
                bad = ~np.isnan(sd) & np.isnan(values)
                if bad.any():
                    line = lines[np.flatnonzero(bad)[0]]
                    raise StudyError(f"{table.file}:{line}: column '{col}_sd' has a value "
                                     f"but '{col}' is empty")
                sd_unit = table.column(col + "_sd").unit or unit
                for line, v in zip(lines, sd, strict=True):
                    if not np.isnan(v) and v <= 0:
                        raise StudyError(f"{table.file}:{line}: column '{col}_sd': "
                                         f"standard deviation {v:g}; expected > 0")
                sd = sd[keep]
                given = ~np.isnan(sd)
                sigma = np.full(len(sd), np.nan)
                if given.any():
                    sigma[given] = np.abs(np.asarray(
                        obs.to_canonical(sd[given], sd_unit, where=w + "_sd"), dtype=float))
            out[col] = (times[keep], canon, sigma, reps[keep], lines[keep], table.file)
        return out

    def assemble(self, name, temperature, initial, raw_series, kind, offset, scale,
                 volume, source) -> Run:
        all_times = np.unique(np.concatenate([s[0] for s in raw_series.values()]))
        series = {}
        for obs, (t, v, sig, rep, lines, file) in raw_series.items():
            order = np.lexsort((rep, t))
            t, v, rep, lines = t[order], v[order], rep[order], lines[order]
            sig = sig[order] if sig is not None else None
            series[obs] = Series(
                observable=obs, times=frozen_array(t), values=frozen_array(v),
                sigma=frozen_array(sig) if sig is not None else None,
                replicate=frozen_array(rep, int),
                index=frozen_array(np.searchsorted(all_times, t), int),
                lines=frozen_array(lines, int), file=file)
        return Run(name=name, temperature=temperature, initial=freeze_mapping(initial),
                   times=frozen_array(all_times), series=freeze_mapping(series),
                   kind=kind, time_offset=offset, initial_scale=scale, volume=volume,
                   source=source)

    # ---- initial-rate tables ------------------------------------------------
    def read_initial_rates(self) -> list[Run]:
        raw = self.doc.get("initial_rates", [])
        if not isinstance(raw, list):
            raise StudyError(f"{self.file}: initial_rates: write each table as an "
                             "[[initial_rates]] table")
        runs: list[Run] = []
        for i, spec in enumerate(raw, start=1):
            where = f"{self.file}: initial_rates[{i}]"
            if not isinstance(spec, Mapping):
                raise StudyError(f"{where}: expected an [[initial_rates]] table")
            _check_keys(spec, RATES_KEYS, where)
            if "table" not in spec:
                raise StudyError(f"{where}: needs table = \"rates.csv\"")
            full, shown = self.table_path(spec["table"], f"{where}.table")
            table = read_table(full, shown=shown)
            if not table.rows:
                raise StudyError(f"{shown}: the initial-rate table has no rows")
            prefix = _text(spec.get("name", f"rate{i}_"), f"{where}.name", '"ir_"')
            base_initial = self.initial(spec.get("initial"), f"{where}.initial")
            volume = self.volume(spec, where)
            columns = {}
            for col in table.names:
                m = _INITIAL_COLUMN.match(col)
                if m:
                    columns[col] = m.group(1)
            if not columns:
                raise StudyError(f"{shown}: an initial-rate table needs initial-"
                                 "concentration columns such as '[Sub]0 / mM'")
            inits = {}
            for col, sp in columns.items():
                unit = self.column_unit(table, col, "concentration", self.u["concentration"])
                vals = table.numbers(col)
                for line, v in zip(table.lines(), vals, strict=True):
                    if v < 0:
                        raise StudyError(f"{shown}:{line}: column '{col}': negative "
                                         f"concentration {v:g}; expected >= 0")
                inits[sp] = unitmod.to_canonical(vals, unit, "concentration")
            if table.has("temperature"):
                unit = self.column_unit(table, "temperature", "temperature",
                                        self.u["temperature"])
                temps = unitmod.to_canonical(table.numbers("temperature"), unit,
                                             "temperature")
                for line, t in zip(table.lines(), temps, strict=True):
                    if t <= 0:
                        raise StudyError(f"{shown}:{line}: column 'temperature' is at or "
                                         "below absolute zero")
            else:
                t = self.run_temperature(spec, where)
                temps = np.full(len(table.rows), t)
            labels = table.text("run") if table.has("run") else [
                f"{prefix}{k:02d}" for k in range(1, len(table.rows) + 1)]
            reserved = set(columns) | {"temperature"}
            groups: dict[str, list[int]] = {}
            for k, lab in enumerate(labels):
                if lab == "":
                    raise StudyError(f"{shown}:{table.lines()[k]}: column 'run' is empty")
                groups.setdefault(lab, []).append(k)
            for lab, rows in groups.items():
                first = rows[0]
                cond = (temps[first],) + tuple(inits[s][first] for s in inits)
                for k in rows[1:]:
                    other = (temps[k],) + tuple(inits[s][k] for s in inits)
                    if not np.allclose(cond, other, rtol=1e-12, atol=0):
                        raise StudyError(f"{shown}:{table.lines()[k]}: run '{lab}' repeats "
                                         f"with other conditions than line "
                                         f"{table.lines()[first]}; give it another name")
                keep = np.zeros(len(table.rows), dtype=bool)
                keep[rows] = True
                sub = table.select(keep)
                initial = dict(base_initial)
                initial.update({s: float(inits[s][first]) for s in inits})
                raw = self.series_of(sub, lab, allow_rate=True, times=np.zeros(len(rows)),
                                     reserved=reserved)
                if "observable" in spec:
                    want = _text(spec["observable"], f"{where}.observable", '"v0"')
                    if want not in raw:
                        raise StudyError(f"{shown}: no column '{want}' (named in "
                                         f"{where}.observable)")
                fixed_raw = {}
                for obs, (t, v, sig, rep, lines, file) in raw.items():
                    when = self.observables[obs].window or 0.0
                    if len(np.unique(rep)) != len(rep):
                        if table.has("replicate"):
                            raise StudyError(f"{shown}: run '{lab}' repeats a replicate "
                                             "label")
                        rep = np.arange(len(rep))
                    fixed_raw[obs] = (t + when, v, sig, rep, lines, file)
                windows = {self.observables[o].window or 0.0 for o in raw}
                if len(windows) > 1:
                    raise StudyError(f"{shown}: initial-rate observables with different "
                                     "windows cannot share a table")
                runs.append(self.assemble(lab, float(temps[first]), initial, fixed_raw,
                                          "initial_rate", None, None, volume, shown))
        return runs

    # ---- temperature laws and priors ----------------------------------------
    def read_temperature_laws(self, runs: list[Run]):
        raw = self.doc.get("temperature_law", {})
        where = f"{self.file}: temperature_law"
        if not isinstance(raw, Mapping):
            raise StudyError(f"{where}: expected a table with default, reference, constants")
        _check_keys(raw, LAW_KEYS, where)
        temps = sorted({r.temperature for r in runs})
        one_temperature = len(temps) == 1
        default = raw.get("default", "constant" if one_temperature else "arrhenius")
        if default not in LAWS:
            raise StudyError(f"{where}.default: expected one of {', '.join(LAWS)}, "
                             f"got {default!r}")
        if "reference" in raw:
            reference = self.temperature(raw["reference"], f"{where}.reference")
        else:
            inv = np.mean([1.0 / r.temperature for r in runs])
            reference = round(float(1.0 / inv), 2)
        constants = raw.get("constants", {})
        if not isinstance(constants, Mapping):
            raise StudyError(f"{where}.constants: expected a table of rate constant = law")
        laws = {}
        for name, law in constants.items():
            if law not in LAWS:
                raise StudyError(f"{where}.constants.{name}: expected one of "
                                 f"{', '.join(LAWS)}, got {law!r}")
            laws[name] = TemperatureLaw(name, law, reference if law == "arrhenius" else None)
        used = {default, *(law.kind for law in laws.values())}
        if one_temperature and used - {"constant"}:
            self.warnings.append(
                f"all runs are at {temps[0]:.2f} K: activation parameters cannot be "
                "determined from these data (only their priors inform them)")
        return default, reference, laws

    def read_priors(self) -> dict[str, Prior]:
        raw = self.doc.get("prior", {})
        if not isinstance(raw, Mapping):
            raise StudyError(f"{self.file}: prior: expected a table of name = {{...}}")
        return {name: build_prior(name, spec, file=self.file) for name, spec in raw.items()}


def load_study(path: str | os.PathLike) -> Study:
    """Load and check a study file and its tables.

    Parameters
    ----------
    path
        The study file (TOML). Table paths in it are relative to its folder.

    Returns
    -------
    Study
        All numbers in canonical units (mol/L, s, K, J/mol, L, W).

    Raises
    ------
    StudyError
        For a missing file, malformed TOML or any inconsistency, naming the file and
        the field, or the table, line and column.
    """
    shown = os.fspath(path)
    p = Path(path)
    try:
        data = p.read_bytes()
    except FileNotFoundError:
        raise StudyError(f"{shown}: study file not found") from None
    except OSError as err:
        raise StudyError(f"{shown}: cannot read the study file ({err})") from None
    try:
        doc = tomllib.loads(data.decode("utf-8-sig"))
    except UnicodeDecodeError as err:
        raise StudyError(f"{shown}: not UTF-8 text ({err})") from None
    except tomllib.TOMLDecodeError as err:
        raise StudyError(f"{shown}: not valid TOML: {err}") from None
    return _Loader(p, shown, doc).load()
