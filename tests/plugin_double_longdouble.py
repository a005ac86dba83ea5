"""pytest plugin: run the suite as on a platform where long double is plain double (Windows, ARM macOS).

    PYTHONPATH=tests python -m pytest -p plugin_double_longdouble

It replaces numpy's longdouble (and clongdouble) by double before boundkit is imported. Expect a few
failures that are artefacts of the substitution (scipy's sparse LIL code wants a real long double).
"""
import numpy as np

np.longdouble = np.float64
np.clongdouble = np.complex128
