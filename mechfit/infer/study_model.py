"""A study and a kinetic model turned into what inference needs: data, model function, parameters.

:func:`study_problem` builds, for one model variant and one loaded study:

* :class:`~mechfit.infer.observations.Observations`: every data point of every run,
  in run order and, within a run, observable by observable; known per-point standard
  deviations ride along; run conditions (temperature, initial concentrations) become
  ``constant_data``;
* a :class:`~mechfit.infer.observations.ModelFunction` that, for a batch of parameter
  vectors, computes each run's rate constants from the temperature laws, solves every
  (parameter set x run) system in one :meth:`mechfit.simulate.Simulator.solve` call,
  and evaluates the observables at the data times;
* the :class:`~mechfit.infer.parameters.Parameters` with the study's priors and the
  defaults of :mod:`mechfit.infer.priors`, Wegscheider ties carried through the
  temperature laws;
* the error model of each observable.

Default priors of temperature-law parameters (mechfit conventions, not physical
bounds; give a prior in the study to change them): Ea and ΔH‡ uniform on 0..250 kJ/mol
(the range of activation energies of elementary steps in solution, bond energies as the
ceiling), ΔS‡ uniform on -250..+100 J/(mol K). The rate constant at the reference
temperature gets the log-uniform default of its order (diffusion limit, k_B T/h at the
highest study temperature). Observable parameters (absorptivities, baselines) have no
physically motivated default: the study must give their priors.

The model's Jacobian chains the simulator's forward sensitivities (d[X]/d ln k,
d[X]/d[Y]0) through the observable expressions (sympy derivatives) and the temperature
laws (d ln k / d Ea = -(1/T - 1/T_ref)/R; d ln k / d ΔH‡ = -1/(RT), d ln k / d ΔS‡ = 1/R).
With a fitted time offset it supplies none, and the least-squares search uses central
differences computed in one batched simulator call per Jacobian.

The least-squares search takes its directions from sensitivities solved at the looser
relative tolerance :data:`SEARCH_RTOL` (the error control covers the sensitivities too,
so they set the step count): about half the cost of a Jacobian on the larger
schemes of bench/batch.py. Residuals, log-likelihoods and the Fisher information at
the optimum always use the full tolerance, and a search ends with a round on the
full-tolerance Jacobian (see :mod:`mechfit.infer.optimize`).

Observables of kind ``initial_rate`` and ``heat_flow`` and time-derivative
observables are not supported here yet; asking for them raises a clear error.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import sympy

from mechfit.errors import StudyError
from mechfit.infer.likelihood import ErrorModel, noise_parameter_names
from mechfit.infer.observations import ModelFunction, Observations
from mechfit.infer.parameters import LAW_PARAMETER_PRIOR, Parameter, Parameters
from mechfit.infer.priors import (
    Fixed,
    LogNormal,
    LogUniform,
    Normal,
    Prior,
    Uniform,
    rate_constant_bounds,
)
from mechfit.mechanism import dependent_constants, symbols
from mechfit.study.temperature import GAS_CONSTANT

ENERGY_PRIOR = Uniform(0.0, 250e3)
ENTROPY_PRIOR = Uniform(-250.0, 100.0)
#: relative tolerance of the sensitivities that give a least-squares search its directions
#: (a mechfit convention: the Jacobian of a Gauss-Newton step needs a few digits, not six)
SEARCH_RTOL = 1e-4
SUPPORTED_KINDS = ("concentration", "expression", "conversion", "yield")


@dataclass
class StudyProblem:
    """Everything :func:`mechfit.infer.fit.fit_study` needs, built from a study and a model."""

    observations: Observations
    model: ModelFunction
    parameters: Parameters
    errors: dict[str, ErrorModel]
    laws: dict
    simulator: object
    #: ``concentrations(x, grid)``: every species of every run on a time grid (see
    #: :func:`mechfit.infer.half_conversion.half_conversion_times`)
    concentrations: Callable | None = None


def convert_prior(prior, *, positive: bool) -> Prior:
    """A study-file prior (:class:`mechfit.study.Prior`) as an inference prior."""
    d = prior.distribution
    if d == "lognormal":
        return LogNormal(prior.median, prior.sd_log)
    if d == "normal":
        return Normal(prior.mean, prior.sd, positive=positive)
    if d == "uniform":
        return Uniform(prior.low, prior.high)
    if d == "loguniform":
        return LogUniform(prior.low, prior.high)
    return Fixed(prior.value)


def _orders(mech) -> dict[str, int]:
    out: dict[str, int] = {}
    for reaction in mech.reactions():
        if reaction.constant is not None:
            out.setdefault(reaction.constant.name, sum(c for _, c in reaction.reactants))
    return out


def _kinetic_parameters(study, kinetic_model, t_max: float) -> tuple[list[Parameter], dict]:
    mech = kinetic_model.mechanism
    orders = _orders(mech)
    laws = study.rate_constant_laws(mech)
    used = set(kinetic_model.parameters)
    laws = {c: law for c, law in laws.items() if c in used}
    ties = dependent_constants(mech)
    priors = study.priors
    out: list[Parameter] = []

    def user(name, default, transform):
        if name in priors:
            return convert_prior(priors[name], positive=transform == "log"), "study prior"
        return default, "default (see docs/inference.md)"

    for const, law in laws.items():
        order = orders.get(const, 1)
        tied = const in ties and not any(n in priors for n in law.parameter_names)
        if tied:
            out.extend(_tied_law_parameters(const, law, ties[const], laws, order))
            continue
        if law.kind in ("arrhenius", "constant"):
            bounds = rate_constant_bounds(order, temperature=t_max)
            prior, note = user(const, LogUniform(*bounds), "log")
            out.append(Parameter(const, float(prior.quantile(0.5)) if not isinstance(
                prior, Fixed) else prior.value, prior, "log", kind="rate constant",
                order=order, note=note))
            if law.kind == "arrhenius":
                name = f"Ea_{const}"
                prior, note = user(name, ENERGY_PRIOR, "identity")
                out.append(_parameter(name, prior, "identity", "activation energy", note))
        elif law.kind == "eyring":
            for name, default, kind in ((f"dH_{const}", ENERGY_PRIOR, "activation enthalpy"),
                                        (f"dS_{const}", ENTROPY_PRIOR, "activation entropy")):
                prior, note = user(name, default, "identity")
                out.append(_parameter(name, prior, "identity", kind, note))
        else:
            raise StudyError(f"{study.path}: unknown temperature law {law.kind!r} of {const}")
    for name in kinetic_model.parameters:
        if name in laws or name in mech.fixed:
            continue
        prior, note = user(name, LAW_PARAMETER_PRIOR, "identity")
        out.append(_parameter(name, prior, "identity", "law parameter", note))
    return out, laws


def _parameter(name, prior, transform, kind, note) -> Parameter:
    value = prior.value if isinstance(prior, Fixed) else float(prior.quantile(0.5))
    return Parameter(name, value, prior, transform, kind=kind, note=note)


def _tied_law_parameters(const, law, expr, laws, order) -> list[Parameter]:
    """Wegscheider ties carried through the temperature laws (see the module docs)."""
    powers = sympy.Mul.make_args(expr)
    exponents: dict[str, sympy.Expr] = {}
    for factor in powers:
        base, exp = factor.as_base_exp()
        if isinstance(base, sympy.Symbol):
            exponents[base.name] = exponents.get(base.name, 0) + exp
    kinds = {laws[n].kind for n in exponents if n in laws} | {law.kind}
    note = "Wegscheider condition (detailed balance)"
    if kinds <= {"constant"}:
        return [Parameter(const, 1.0, None, "log", expr, "rate constant", order, note)]
    if kinds <= {"arrhenius", "constant"} and law.kind == "arrhenius":
        ea = sum((e * sympy.Symbol(f"Ea_{n}") for n, e in exponents.items()
                  if n in laws and laws[n].kind == "arrhenius"), sympy.Integer(0))
        return [Parameter(const, 1.0, None, "log", expr, "rate constant", order, note),
                Parameter(f"Ea_{const}", 0.0, None, "identity", ea, "activation energy",
                          None, note)]
    if kinds == {"eyring"}:
        dh = sum((e * sympy.Symbol(f"dH_{n}") for n, e in exponents.items()), sympy.Integer(0))
        ds = sum((e * sympy.Symbol(f"dS_{n}") for n, e in exponents.items()), sympy.Integer(0))
        return [Parameter(f"dH_{const}", 0.0, None, "identity", dh, "activation enthalpy",
                          None, note),
                Parameter(f"dS_{const}", 0.0, None, "identity", ds, "activation entropy",
                          None, note)]
    raise StudyError(f"the Wegscheider condition of {const} links rate constants with "
                     f"different temperature laws ({', '.join(sorted(kinds))}); give them "
                     "one law, or a prior for " + const)


def _observable_function(observable, species: tuple[str, ...]):
    """(function, arguments, gradient) of an observable of concentrations and parameters."""
    expr = observable.expression
    if expr is None or observable.derivative or observable.kind not in SUPPORTED_KINDS:
        raise StudyError(f"observable '{observable.name}' of kind '{observable.kind}' is not "
                         "supported by the fit yet (supported: "
                         + ", ".join(SUPPORTED_KINDS) + ")")
    fixed = {sympy.Symbol(n, real=True): v for n, v in observable.fixed.items()}
    fixed.update({sympy.Symbol(n, positive=True): v for n, v in observable.fixed.items()})
    expr = expr.xreplace({k: sympy.Float(v) for k, v in fixed.items()})
    syms = sorted(expr.free_symbols, key=lambda s: s.name)
    args = []
    for s in syms:
        name = s.name
        if name.endswith(symbols.INITIAL_SUFFIX) and name[:-3] in species:
            args.append(("initial", species.index(name[:-3])))
        elif name in species:
            args.append(("concentration", species.index(name)))
        else:
            args.append(("parameter", name))
    function = sympy.lambdify(syms, expr, modules="numpy")
    gradient = tuple(sympy.lambdify(syms, sympy.diff(expr, sym), modules="numpy")
                     for sym in syms)
    return function, args, gradient


def study_problem(study, kinetic_model, *, rtol: float = 1e-6, simulator=None,
                  sensitivities: bool = True) -> StudyProblem:
    """Build the :class:`StudyProblem` of a study and a kinetic model (see the module docs).

    ``rtol`` is the simulator's relative tolerance (absolute: 1e-4 ``rtol`` times the
    largest initial concentration of each run). The default 1e-6 keeps integration
    error far below any data's noise (common practice); on the demo the log-likelihood
    differs from a 1e-8 solve by less than 0.05 at points one standard deviation from
    the optimum, while a likelihood call costs 0.6 times as much.

    ``sensitivities=False`` leaves the Jacobian to batched central differences.
    """
    from mechfit.simulate import Simulator

    mech = kinetic_model.mechanism
    study.validate_against(mech)
    sim = simulator or Simulator(kinetic_model, rtol=rtol)
    species = sim.species
    runs = study.runs
    for run in runs:
        if run.kind != "time_course":
            raise StudyError(f"{study.path}: run '{run.name}' is an initial-rate row; the fit "
                             "supports time-course runs only so far")
    t_max = max(study.temperatures)
    kinetic, laws = _kinetic_parameters(study, kinetic_model, t_max)
    params = list(kinetic)
    names = {p.name for p in params}
    observed = [o for o in study.observables.values() if any(o.name in r.series for r in runs)]
    functions = {o.name: _observable_function(o, species) for o in observed}
    missing = []
    for o in observed:
        for name in o.fitted:
            if name in names:
                continue
            if name not in study.priors:
                missing.append(f"{name} (observable {o.name})")
                continue
            prior = convert_prior(study.priors[name], positive=False)
            params.append(_parameter(name, prior, "identity", "observable parameter",
                                     "study prior"))
            names.add(name)
    if missing:
        raise StudyError(f"{study.path}: give a prior in the [prior] table for "
                         + ", ".join(missing) + "; observable parameters have no default")
    for run in runs:
        if run.time_offset is not None and run.time_offset.fitted:
            t = run.time_offset
            params.append(_parameter(t.parameter, Normal(t.value, t.sd), "identity",
                                     "time offset", f"run {run.name}"))
        if run.initial_scale is not None:
            s = run.initial_scale
            params.append(Parameter(s.parameter, 1.0, Normal(1.0, s.sd, positive=True), "log",
                                    kind="initial scale", note=f"run {run.name}"))
    # ---- observations ------------------------------------------------------------------
    obs_names = tuple(o.name for o in observed)
    values, obs_index, run_index, times, sigma, picks = [], [], [], [], [], []
    for r, run in enumerate(runs):
        for name, series in run.series.items():
            n = len(series)
            values.append(series.values)
            obs_index.append(np.full(n, obs_names.index(name)))
            run_index.append(np.full(n, r))
            times.append(series.times)
            sigma.append(series.sigma if series.sigma is not None else np.full(n, np.nan))
            picks.append((r, name, np.asarray(series.index)))
    conditions = {"temperature": np.array([run.temperature for run in runs])}
    for s in species:
        conditions[f"initial_{s}"] = np.array([run.initial.get(s, 0.0) for run in runs])
    units = {"concentration": "mol/L", "time": "s", "temperature": "K"}
    observations = Observations(np.concatenate(values), np.concatenate(obs_index),
                                np.concatenate(run_index), np.concatenate(times), obs_names,
                                tuple(run.name for run in runs), conditions, units,
                                np.concatenate(sigma))
    # ---- error models ----------------------------------------------------------------
    errors = {}
    for o in observed:
        points = observations.observable == obs_names.index(o.name)
        all_known = observations.sigma is not None and np.all(
            np.isfinite(observations.sigma[points]))
        if o.noise.kind == "known" or all_known:
            errors[o.name] = ErrorModel(sigma=o.noise.sigma if o.noise.sigma else 1.0)
        else:
            errors[o.name] = ErrorModel()
            a_name, _ = noise_parameter_names(o.name)
            if o.noise.parameter and o.noise.parameter != a_name:
                raise StudyError(f"{study.path}: the noise parameter of {o.name} must be named "
                                 f"{a_name}")
            if a_name in study.priors:
                prior = convert_prior(study.priors[a_name], positive=True)
                params.append(_parameter(a_name, prior, "log", "noise", "study prior"))
    parameters = Parameters(tuple(params))
    model, concentrations = _model_function(study, kinetic_model, sim, laws, parameters,
                                            functions, picks, observations)
    if not sensitivities:
        model = ModelFunction(model.parameter_names, model.predict)
    return StudyProblem(observations, model, parameters, errors, laws, sim, concentrations)


def _model_function(study, kinetic_model, sim, laws, parameters, functions, picks,
                    observations) -> ModelFunction:
    runs = study.runs
    species = sim.species
    names = tuple(p.name for p in parameters if p.kind != "noise")
    column = {n: i for i, n in enumerate(names)}
    fixed = dict(kinetic_model.mechanism.fixed)
    temperatures = np.array([run.temperature for run in runs])
    nominal = np.array([[run.initial.get(s, 0.0) for s in species] for run in runs])
    n_runs = len(runs)
    width = max(len(run.times) for run in runs)
    offsets = [run.time_offset for run in runs]
    scales = [run.initial_scale for run in runs]
    slices = []
    start = 0
    for r, name, _index in picks:
        n = len(runs[r].series[name])
        slices.append(slice(start, start + n))
        start += n
    n_data = observations.n

    def solve(x: np.ndarray, sensitivities, grid: np.ndarray | None = None,
              rtol: float | None = None):
        m = x.shape[0]
        values = {n: x[:, i] for n, i in column.items()}
        rate = np.empty((n_runs, m, len(sim.parameters)))
        for j, p in enumerate(sim.parameters):
            if p in laws:
                law = laws[p]
                v = {q: values[q][:, None] for q in law.parameter_names}
                rate[:, :, j] = np.asarray(law.rate_constant(v, temperatures[None, :])).T
            elif p in values:
                rate[:, :, j] = values[p][None, :]
            else:
                rate[:, :, j] = fixed[p]
        initial = np.repeat(nominal[:, None, :], m, axis=1)
        columns = width if grid is None else grid.shape[1]
        time_rows = np.full((n_runs, m, columns), np.nan)
        counts = np.empty((n_runs, m), dtype=np.int64)
        for r, run in enumerate(runs):
            if scales[r] is not None:
                cols = [species.index(s) for s in scales[r].species]
                initial[r][:, cols] *= values[scales[r].parameter][:, None]
            if grid is not None:  # times from the start of the reaction
                time_rows[r] = grid[r][None, :]
                counts[r] = columns
                continue
            t0 = offsets[r]
            shift = (values[t0.parameter] if t0 is not None and t0.fitted
                     else np.full(m, t0.value if t0 is not None else 0.0))
            k = len(run.times)
            time_rows[r, :, :k] = run.times[None, :] + shift[:, None]
            counts[r] = k
        bad_time = np.any(time_rows[..., 0] < 0, axis=0) if n_runs else np.zeros(m, bool)
        time_rows = np.where(time_rows < 0, 0.0, time_rows)
        result = sim.solve(time_rows.reshape(n_runs * m, columns),
                           initial.reshape(n_runs * m, -1), rate.reshape(n_runs * m, -1),
                           counts=counts.reshape(-1), sensitivities=sensitivities, rtol=rtol)
        conc = result.concentrations.reshape(n_runs, m, columns, len(species))
        ok = np.asarray(result.ok).reshape(n_runs, m).all(axis=0) & ~bad_time
        return values, initial, conc, ok, result, rate

    def arguments(args, values, initial, c, r):
        out = []
        for kind, a in args:
            if kind == "concentration":
                out.append(c[:, :, a])
            elif kind == "initial":
                out.append(initial[r][:, a][:, None])
            else:
                out.append(values[a][:, None])
        return out

    def predict(x: np.ndarray) -> np.ndarray:
        m = x.shape[0]
        values, initial, conc, ok, _, _ = solve(x, False)
        out = np.empty((m, n_data))
        for (r, name, index), where in zip(picks, slices, strict=True):
            function, args, _ = functions[name]
            vals = arguments(args, values, initial, conc[r][:, index, :], r)
            out[:, where] = np.broadcast_to(function(*vals), (m, where.stop - where.start))
        out[~ok] = np.nan
        return out

    scaled_runs = any(sc is not None for sc in scales)

    def chain_map(r, labels, values, rate, m):
        """d(sensitivity direction)/d(parameter column) in run ``r``: (m, directions,
        columns). Directions are ``ln k`` or ``k`` of the simulator's parameters and
        ``[X]0``; columns are the natural values of the fitted parameters, through the
        temperature laws and the run's initial-concentration scale."""
        out = np.zeros((m, len(labels), len(names)))
        T = temperatures[r]
        for j, label in enumerate(labels):
            if label.startswith("["):
                sp = label[1:-2]
                if scales[r] is not None and sp in scales[r].species:
                    out[:, j, column[scales[r].parameter]] += nominal[r, species.index(sp)]
                continue
            log = label.startswith("ln ")
            p = label[3:] if log else label
            if p in laws:
                law = laws[p]
                for q in law.parameter_names:
                    if q not in column:
                        continue
                    if law.kind == "arrhenius" and q != p:
                        dlnk = -(1.0 / T - 1.0 / law.reference_temperature) / GAS_CONSTANT
                    elif law.kind == "eyring":
                        dlnk = (-1.0 / (GAS_CONSTANT * T) if q.startswith("dH_")
                                else 1.0 / GAS_CONSTANT)
                    else:
                        dlnk = 1.0 / values[q]
                    out[:, j, column[q]] += dlnk if log else dlnk * rate[r, :, j]
            elif p in column:
                out[:, j, column[p]] += 1.0 / rate[r, :, j] if log else 1.0
        return out

    def sensitivities(x: np.ndarray, rtol: float | None = None
                      ) -> tuple[np.ndarray, np.ndarray]:
        m = x.shape[0]
        values, initial, conc, ok, result, rate = solve(x, "all" if scaled_runs else
                                                          "parameters", rtol=rtol)
        labels = result.sensitivity_names
        sens = result.sensitivities.reshape(n_runs, m, width, len(species), len(labels))
        maps = [chain_map(r, labels, values, rate, m) for r in range(n_runs)]
        out = np.empty((m, n_data))
        jac = np.zeros((m, n_data, len(names)))
        for (r, name, index), where in zip(picks, slices, strict=True):
            function, args, gradient = functions[name]
            n = where.stop - where.start
            vals = arguments(args, values, initial, conc[r][:, index, :], r)
            out[:, where] = function(*vals)
            dfdc = np.zeros((m, n, len(species)))
            block = jac[:, where]
            for (kind, a), g in zip(args, gradient, strict=True):
                if kind == "concentration":
                    dfdc[:, :, a] += g(*vals)
                elif kind == "parameter" and a in column:
                    block[:, :, column[a]] += g(*vals)
                elif kind == "initial" and scales[r] is not None and \
                        species[a] in scales[r].species:
                    block[:, :, column[scales[r].parameter]] += g(*vals) * nominal[r, a]
            # d f / d direction, (m, n, directions), then to the parameter columns
            dfdd = np.einsum("mns,mnsd->mnd", dfdc, sens[r][:, index])
            block += np.einsum("mnd,mdc->mnc", dfdd, maps[r])
        out[~ok] = np.nan
        jac[~ok] = np.nan
        return out, jac

    def concentrations(x: np.ndarray, grid: np.ndarray) -> tuple[np.ndarray, ...]:
        """Every species of every run on ``grid`` (runs, G) of times from the start:
        (runs, m, G, species), whether each run solved (runs, m), and the initial
        concentrations given to the simulator (runs, m, species)."""
        _values, initial, conc, _ok, result, _rate = solve(x, False, np.asarray(grid, float))
        solved = np.asarray(result.ok).reshape(n_runs, x.shape[0])
        return conc, solved, initial

    def search_sensitivities(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        return sensitivities(x, max(sim.rtol, SEARCH_RTOL))

    if any(t is not None and t.fitted for t in offsets):
        return ModelFunction(names, predict), concentrations
    return ModelFunction(names, predict, sensitivities, search_sensitivities), concentrations
