"""The worked numbers in the hydraulics docstrings, run as doctests.

Each example names its source beside it in the docstring: the Moody chart (Moody 1944,
chart readings from memory) for Colebrook--White and Swamee--Jain, the IAPWS 2008
release and Kell (1975) for water (values from memory), the definitions of the bar and
of standard gravity for bar <-> metres, and hand calculations from the formulas
(velocity of 50 L/s in a 200 mm bore, velocity head, Hazen--Williams gradient, energy
line), marked common practice, no source. Every module must carry at least one example,
so the test cannot pass by finding nothing to run.
"""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import optimiser.hydraulics

MODULES = sorted(info.name for info in pkgutil.iter_modules(optimiser.hydraulics.__path__))


def test_every_hydraulics_module_is_listed():
    # common practice, no source: guards the parametrisation against an empty package
    assert {"constants", "friction", "gradeline", "local_losses", "water"} <= set(MODULES)


@pytest.mark.parametrize("name", MODULES)
def test_worked_numbers_in_docstrings(name):
    module = importlib.import_module(f"optimiser.hydraulics.{name}")
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS, verbose=False)
    assert result.attempted > 0, f"optimiser.hydraulics.{name} has no worked example"
    assert result.failed == 0, f"{result.failed} worked example(s) of {name} failed"
