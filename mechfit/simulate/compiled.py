"""The compiled simulation library: finding it, and calling it with checked arrays.

The integrators, the kinetics tables and the opcode machine are C, compiled once when
mechfit is installed (``pip install .`` or ``pip install -e .``) into the extension
module ``mechfit.simulate._native`` (sources in ``mechfit/simulate/native/``). This
module loads that file with :mod:`ctypes` and calls its plain C functions with
pointers into numpy arrays. The library is looked for beside this file, else in the
installed distribution (tests of a source checkout after ``pip install .``); in a
source checkout it must have been built from the sources there (their fingerprint,
:mod:`mechfit.simulate.sources`), else it is refused with the command that rebuilds
it. Before any call every array is checked here (type
float64 or int64, C order, shape, writeable outputs) and refused with a
:class:`SimulationInputError` naming it, so the C code never sees an array it cannot
read; the model tables are checked once more by the library itself
(``mf_check_model``) before they are first used.

ctypes releases the GIL during the calls and the C code keeps no state between calls
(every call allocates its own work memory), so several threads may solve at once.

Examples
--------
>>> layout = library_layout()
>>> layout["version"] >= 1
True
"""

from __future__ import annotations

import ctypes
import importlib.machinery
import importlib.metadata
import importlib.util
import threading
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from mechfit.errors import IntegrationFailure, MechfitError
from mechfit.simulate.sources import FOLDER, source_fingerprint

#: must equal MF_LAYOUT_VERSION of native/kinetics.h
LAYOUT_VERSION = 1

_MODULE = "mechfit.simulate._native"
_SUFFIXES = tuple(importlib.machinery.EXTENSION_SUFFIXES)
_DONE, _NO_MEMORY = 0, 1


class SimulationInputError(MechfitError):
    """Arrays given to the simulator have the wrong shape, type or unusable times."""


class CompiledLibraryError(MechfitError):
    """The compiled simulation library is missing or was built from other sources."""

    exit_code = 1


_i64 = ctypes.c_int64
_ptr = ctypes.c_void_p


class ModelStruct(ctypes.Structure):
    """Mirror of ``mf_model`` in ``native/kinetics.h`` (same fields, same order)."""

    _fields_ = [
        ("kind", _i64), ("n_state", _i64), ("n_parameters", _i64), ("n_species", _i64),
        ("n_reactions", _i64), ("width", _i64),
        ("stoich", _ptr), ("ridx", _ptr), ("rord", _ptr), ("rcnt", _ptr), ("rpar", _ptr),
        ("rfac", _ptr),
        ("ops", _ptr), ("args", _ptr), ("n_ops", _i64), ("consts", _ptr), ("n_consts", _i64),
        ("stack_size", _i64),
        ("rhs", _ptr), ("jacobian", _ptr), ("n_jacobian", _i64),
        ("forcing", _ptr), ("n_forcing", _i64), ("second", _ptr), ("n_second", _i64),
        ("mixed", _ptr), ("n_mixed", _i64), ("algebraic", _ptr), ("n_algebraic", _i64),
        ("algebraic_state", _ptr), ("n_algebraic_state", _i64),
        ("algebraic_direction", _ptr), ("n_algebraic_direction", _i64),
    ]


class BatchStruct(ctypes.Structure):
    """Mirror of ``mf_batch`` in ``native/kinetics.h``."""

    _fields_ = [
        ("n_systems", _i64), ("n_times", _i64), ("times", _ptr), ("counts", _ptr),
        ("y0", _ptr), ("params", _ptr), ("x0", _ptr), ("rtol", _ptr), ("atol", _ptr),
        ("max_steps", _i64), ("state_index", _ptr), ("out", _ptr), ("status", _ptr),
        ("steps", _ptr), ("t_reached", _ptr), ("n_directions", _i64), ("dirpos", _ptr),
        ("sens_init", _ptr), ("sens_atol", _ptr), ("sens_out", _ptr),
    ]


_lock = threading.Lock()
_library: ctypes.CDLL | None = None


def library() -> ctypes.CDLL:
    """The loaded library (loaded on first use, then shared).

    Raises
    ------
    CompiledLibraryError
        When mechfit runs from a source tree where the library was never built, or the
        library was built from other sources (then it says how to rebuild).
    """
    global _library
    with _lock:
        if _library is None:
            _library = _load()
        return _library


def _candidates() -> list[str]:
    """Where the library may be: beside this file (an install, or a source checkout
    built with ``pip install -e .``), else in the installed distribution of mechfit
    (a source checkout whose tests run after ``pip install .``)."""
    found = []
    try:
        spec = importlib.util.find_spec(_MODULE)
    except (ImportError, ValueError):
        spec = None
    if spec is not None and spec.origin:
        found.append(spec.origin)
    # every mechfit on the path: a source checkout also holds the build's egg-info
    files = [entry for dist in importlib.metadata.distributions(name="mechfit")
             for entry in dist.files or []]
    for entry in files:
        if entry.parent.as_posix() == "mechfit/simulate" and \
                entry.name.startswith("_native.") and entry.name.endswith(_SUFFIXES):
            path = str(entry.locate())
            if path not in found and Path(path).is_file():
                found.append(path)
    return found


def _load() -> ctypes.CDLL:
    rebuild = ("build it by installing mechfit: 'pip install -e .' in a source checkout "
               "(needs a C compiler and the Python headers), or 'pip install .'")
    candidates = _candidates()
    if not candidates:
        raise CompiledLibraryError(f"the compiled simulation library {_MODULE} was not found "
                                   f"next to {__file__} nor in an installed mechfit; "
                                   + rebuild)
    path = candidates[0]
    try:
        lib = ctypes.CDLL(path)
    except OSError as err:
        raise CompiledLibraryError(f"the compiled simulation library {path} cannot be "
                                   f"loaded ({err}); {rebuild}") from None
    if not hasattr(lib, "mf_layout") or not hasattr(lib, "mf_source_fingerprint"):
        raise CompiledLibraryError(f"{path} is not mechfit's simulation library; " + rebuild)
    lib.mf_source_fingerprint.argtypes = []
    lib.mf_source_fingerprint.restype = ctypes.c_char_p
    built_from = lib.mf_source_fingerprint().decode()
    here = source_fingerprint()
    if here is not None and built_from != here:
        raise CompiledLibraryError(f"{path} was built from other sources than those in "
                                   f"{FOLDER} (edited since the build?); rebuild it: "
                                   + rebuild)
    layout = (ctypes.c_int64 * 3)()
    lib.mf_layout.argtypes = [ctypes.c_void_p]
    lib.mf_layout.restype = None
    lib.mf_layout(layout)
    expected = (LAYOUT_VERSION, ctypes.sizeof(ModelStruct), ctypes.sizeof(BatchStruct))
    if tuple(layout) != expected:
        raise CompiledLibraryError(f"{path} was built from other sources (layout "
                                   f"{tuple(layout)}, expected {expected}); rebuild it: "
                                   + rebuild)
    model_p, batch_p = ctypes.POINTER(ModelStruct), ctypes.POINTER(BatchStruct)
    signatures = {
        "mf_check_model": ([model_p], ctypes.c_int64),
        "mf_solve_rodas4": ([model_p, batch_p], ctypes.c_int),
        "mf_solve_bdf": ([model_p, batch_p], ctypes.c_int),
        "mf_initial_rates": ([model_p, _i64, _ptr, _ptr, _ptr, _ptr, _ptr], ctypes.c_int),
        "mf_evaluate": ([_ptr, _ptr, _ptr, _i64, _i64, _ptr, _ptr, _ptr, _ptr],
                        ctypes.c_double),
        "mf_check_program": ([_ptr, _ptr] + [_i64] * 8, ctypes.c_int64),
    }
    for name, (args, result) in signatures.items():
        function = getattr(lib, name)
        function.argtypes = args
        function.restype = result
    return lib


def library_layout() -> dict[str, int]:
    """The layout the library was built with: ``version`` and the sizes in bytes of its
    two shared structures (``model``, ``batch``)."""
    layout = (ctypes.c_int64 * 3)()
    library().mf_layout(layout)
    return {"version": layout[0], "model": layout[1], "batch": layout[2]}


# ---- checked pointers ----------------------------------------------------------------

def pointer(array, name: str, dtype, shape: Sequence[int | None], *,
            writeable: bool = False) -> int:
    """The address of ``array`` after checking that C code may use it as given.

    Parameters
    ----------
    array
        Must be a C-contiguous :class:`numpy.ndarray` of exactly ``dtype``.
    name
        How the error message names the array.
    dtype
        ``np.float64`` or ``np.int64``.
    shape
        Expected shape; ``None`` accepts any length on that axis.
    writeable
        The C code writes into the array.

    Raises
    ------
    SimulationInputError
        Naming the array and what was expected.
    """
    want = np.dtype(dtype)
    expected = "(" + ", ".join("any" if s is None else str(s) for s in shape) + ")"
    if not isinstance(array, np.ndarray):
        raise SimulationInputError(f"{name} must be a numpy array of {want.name} with shape "
                                   f"{expected}; got {type(array).__name__}")
    if array.dtype != want:
        raise SimulationInputError(f"{name} must be a numpy array of {want.name}; got "
                                   f"{array.dtype.name}")
    if array.ndim != len(shape) or any(s is not None and s != a
                                       for s, a in zip(shape, array.shape, strict=False)):
        raise SimulationInputError(f"{name} must have shape {expected}; got {array.shape}")
    if not array.flags.c_contiguous:
        raise SimulationInputError(f"{name} must be C-contiguous (np.ascontiguousarray)")
    if writeable and not array.flags.writeable:
        raise SimulationInputError(f"{name} is written into and must be writeable")
    return array.ctypes.data


def model_struct(tables) -> ModelStruct:
    """The checked ``mf_model`` of :class:`~mechfit.simulate.kernel.ModelTables` (built
    once per tables object and kept on it, with the arrays it points into)."""
    cached = getattr(tables, "_struct", None)
    if cached is not None:
        return cached
    f64, i64 = np.float64, np.int64
    n, n_par, n_sp = tables.n_state, tables.n_parameters, tables.n_species
    stoich, ridx, rord, rcnt, rpar, rfac = tables.mass_action
    (ops, args, consts, rhs, jac, forcing, second, mixed, alg, alg_state,
     alg_dir) = tables.program
    n_r, width = ridx.shape if ridx.ndim == 2 else (-1, -1)
    s = ModelStruct()
    s.kind, s.n_state, s.n_parameters, s.n_species = tables.kind, n, n_par, n_sp
    s.n_reactions, s.width = n_r, width
    s.stoich = pointer(stoich, "stoichiometric matrix", f64, (n if n_r else None, n_r))
    s.ridx = pointer(ridx, "reactant index table", i64, (n_r, width))
    s.rord = pointer(rord, "reactant order table", i64, (n_r, width))
    s.rcnt = pointer(rcnt, "reactant count table", i64, (n_r,))
    s.rpar = pointer(rpar, "rate-constant index table", i64, (n_r,))
    s.rfac = pointer(rfac, "statistical factor table", f64, (n_r,))
    s.ops = pointer(ops, "opcodes", i64, (None,))
    s.args = pointer(args, "opcode arguments", i64, (ops.shape[0],))
    s.n_ops = ops.shape[0]
    s.consts = pointer(consts, "program constants", f64, (None,))
    s.n_consts = consts.shape[0]
    s.stack_size = int(tables.stack_size)
    s.rhs = pointer(rhs, "right-hand-side programs", i64, (None, 2))
    for field, table, cols, label in (
            ("jacobian", jac, 4, "Jacobian programs"),
            ("forcing", forcing, 4, "forcing programs"),
            ("second", second, 5, "second-derivative programs"),
            ("mixed", mixed, 5, "mixed-derivative programs"),
            ("algebraic", alg, 3, "algebraic-species programs"),
            ("algebraic_state", alg_state, 4, "algebraic state-derivative programs"),
            ("algebraic_direction", alg_dir, 4, "algebraic direction-derivative programs")):
        setattr(s, field, pointer(table, label, i64, (None, cols)))
        setattr(s, f"n_{field}", table.shape[0])
    if tables.kind == 1 and rhs.shape[0] != n:
        raise SimulationInputError(f"right-hand-side programs must have {n} rows; got "
                                   f"{rhs.shape[0]}")
    code = library().mf_check_model(ctypes.byref(s))
    if code:
        what = {1: "their sizes or kind", 2: "the mass-action tables",
                3: "a program table (index, slice or stack depth)"}.get(code, "unknown")
        raise SimulationInputError(f"the model tables do not fit together ({what}); they "
                                   "must come from mechfit.simulate.kernel.build_tables")
    s._keep = (tables.mass_action, tables.program)  # the arrays s points into
    tables._struct = s
    return s


def batch_struct(tables, *, times, counts, y0, params, x0, rtol, atol, max_steps,
                 state_index, out, status, steps, t_reached, dirpos=None, sens_init=None,
                 sens_atol=None, sens_out=None) -> BatchStruct:
    """The checked ``mf_batch`` of one call (see ``native/kinetics.h`` for the arrays)."""
    f64, i64 = np.float64, np.int64
    n, n_sp = tables.n_state, tables.n_species
    b = BatchStruct()
    if not isinstance(times, np.ndarray) or times.ndim != 2:
        raise SimulationInputError("times must be a 2-D numpy array (systems, times)")
    n_sys, n_t = times.shape
    b.n_systems, b.n_times = n_sys, n_t
    b.times = pointer(times, "times", f64, (n_sys, n_t))
    b.counts = pointer(counts, "counts", i64, (n_sys,))
    if np.any(counts < 0) or np.any(counts > n_t):
        raise SimulationInputError(f"counts must be between 0 and {n_t}")
    b.y0 = pointer(y0, "initial state", f64, (n_sys, n))
    b.params = pointer(params, "parameters", f64, (n_sys, tables.n_parameters))
    b.x0 = pointer(x0, "initial concentrations", f64, (n_sys, n_sp))
    b.rtol = pointer(rtol, "rtol", f64, (n_sys,))
    b.atol = pointer(atol, "atol", f64, (n_sys, n))
    b.max_steps = int(max_steps)
    b.state_index = pointer(state_index, "state_index", i64, (n,))
    if np.any(state_index < 0) or np.any(state_index >= n_sp):
        raise SimulationInputError(f"state_index must hold output columns 0..{n_sp - 1}")
    b.out = pointer(out, "out", f64, (n_sys, n_t, n_sp), writeable=True)
    b.status = pointer(status, "status", i64, (n_sys,), writeable=True)
    b.steps = pointer(steps, "steps", i64, (n_sys,), writeable=True)
    b.t_reached = pointer(t_reached, "t_end_reached", f64, (n_sys,), writeable=True)
    if sens_init is None:
        dirpos = np.full(tables.n_parameters + n_sp, -1, dtype=np.int64)
        sens_init, sens_atol = np.zeros((n, 0)), np.zeros((n_sys, 0))
        sens_out = np.zeros((n_sys, n_t, n_sp, 0))
    b.sens_init = pointer(sens_init, "sens_init", f64, (n, None))
    nq = b.n_directions = sens_init.shape[1]
    b.dirpos = pointer(dirpos, "dirpos", i64, (tables.n_parameters + n_sp,))
    if np.any(dirpos < -1) or np.any(dirpos >= nq):
        raise SimulationInputError(f"dirpos must hold -1 or a direction 0..{nq - 1}")
    b.sens_atol = pointer(sens_atol, "sens_atol", f64, (n_sys, nq))
    b.sens_out = pointer(sens_out, "sens_out", f64, (n_sys, n_t, n_sp, nq), writeable=True)
    b._keep = (dirpos, sens_init, sens_atol, sens_out)
    return b


def run(function, *arguments) -> None:
    """Call a library entry point and turn its return code into an error."""
    code = function(*arguments)
    if code == _NO_MEMORY:
        raise IntegrationFailure("the simulator could not allocate its work memory; "
                                 "solve fewer systems per call or free memory")
    if code != _DONE:
        raise IntegrationFailure(f"the compiled simulator returned the unknown code {code}")
