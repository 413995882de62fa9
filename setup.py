"""Builds the compiled simulation library; all other metadata is in pyproject.toml.

``mechfit.simulate._native`` is one shared library built from the C sources in
``mechfit/simulate/native/`` (integrators, kinetics, the opcode machine). It is
loaded with ctypes by ``mechfit/simulate/compiled.py``. Optimised for any x86-64
(no ``-march=native``) and without ``-ffast-math``: the NaN and infinity checks of
the integrators need IEEE arithmetic. The fingerprint of the sources is built in
(``mechfit/simulate/sources.py``), so that a source checkout never runs a library
built from other sources. Without a working C compiler the install stops with a message
that says what to install.
"""

import importlib.util
from pathlib import Path

from setuptools import Extension, setup
from setuptools.command.build_ext import build_ext
from setuptools.errors import CompileError, ExecError, LinkError, PlatformError

NATIVE = Path("mechfit") / "simulate" / "native"

_spec = importlib.util.spec_from_file_location("sources", NATIVE.parent / "sources.py")
_sources = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(_sources)



class BuildNative(build_ext):
    """build_ext whose failure says what the machine lacks, in one line."""

    def run(self):
        try:
            super().run()
        except (CompileError, ExecError, LinkError, PlatformError, OSError) as err:
            raise SystemExit(
                "mechfit: building the C simulator (mechfit/simulate/native) failed: "
                f"{err}. Installing mechfit needs a C compiler and the Python headers "
                "(on Debian: apt-get install gcc python3-dev).") from None


setup(
    cmdclass={"build_ext": BuildNative},
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
