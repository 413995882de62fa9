/* The Python module mechfit.simulate._native: empty. It exists so that setuptools
 * builds this shared library with the package and importlib can find its path; the
 * functions are called through ctypes (mechfit/simulate/compiled.py). */
#define PY_SSIZE_T_CLEAN
#include <Python.h>

static struct PyModuleDef native_module = {
    PyModuleDef_HEAD_INIT,
    "_native",
    "Compiled integrators and kinetics of mechfit.simulate (called through ctypes).",
    -1,
    NULL,
    NULL,
    NULL,
    NULL,
    NULL,
};

PyMODINIT_FUNC PyInit__native(void)
{
    return PyModule_Create(&native_module);
}
