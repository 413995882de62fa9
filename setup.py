"""Builds the compiled simulation library; all other metadata is in pyproject.toml.

``mechfit.simulate._native`` is one shared library built from the C sources in
``mechfit/simulate/native/`` (integrators, kinetics, the opcode machine). It is
loaded with ctypes by ``mechfit/simulate/compiled.py``. Optimised for any x86-64
(no ``-march=native``) and without ``-ffast-math``: the NaN and infinity checks of
the integrators need IEEE arithmetic. The fingerprint of the sources is built in
(``mechfit/simulate/sources.py``), so that a source checkout never runs a library
built from other sources.
"""

import importlib.util
from pathlib import Path

from setuptools import Extension, setup

NATIVE = Path("mechfit") / "simulate" / "native"

_spec = importlib.util.spec_from_file_location("sources", NATIVE.parent / "sources.py")
_sources = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(_sources)

setup(
    ext_modules=[
        Extension(
            "mechfit.simulate._native",
            sources=sorted(p.as_posix() for p in NATIVE.glob("*.c")),
            depends=sorted(p.as_posix() for p in NATIVE.glob("*.h")),
            define_macros=[("MF_SOURCE_FINGERPRINT",
                            f'"{_sources.source_fingerprint(NATIVE.resolve())}"')],
            libraries=["m"],
            extra_compile_args=["-std=c11", "-O3", "-g0"],
        )
    ]
)
