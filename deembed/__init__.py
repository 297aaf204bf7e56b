"""deembed: remove a feed line from an antenna sweep taken at the analyzer end of it.

The library in a few names::

    from deembed import read_sweep, Section, Line, LossModel, catalog, correct

    sweep = read_sweep("sample_sweeps/dipole-40m.s1p")
    line = Line((catalog()["rg213"].section(30.0),))
    result = correct(sweep, line)          # result.gamma_feedpoint: the feedpoint's reflection
    net = result.feedpoint_network()       # the same as a scikit-rf Network

The package is layered (see DEVELOPERS.md): ``base`` < ``physics`` < ``io`` < ``analysis`` < ``render``
< ``jobs`` < ``cli``, each importing only the layers below it. The names above are loaded on first use,
so ``import deembed`` costs almost nothing; scikit-rf, matplotlib and pandas are imported only by the
functions that need them.
"""
from __future__ import annotations

import importlib

__version__ = "0.1.0"

_PUBLIC = {
    "DeembedError": "base.errors", "InputFileError": "base.errors", "OptionError": "base.errors",
    "Line": "physics.line", "LossModel": "physics.line", "MeasuredTwoPort": "physics.line",
    "Section": "physics.line", "abcd_to_s": "physics.line", "s_to_abcd": "physics.line",
    "Correction": "physics.deembedding", "correct": "physics.deembedding",
    "deembed_network": "physics.deembedding", "embed_gamma": "physics.deembedding",
    "feedpoint_gamma": "physics.deembedding",
    "Sweep": "io.sweep", "one_port": "io.sweep", "read_sweep": "io.touchstone",
    "Cable": "io.cables", "catalog": "io.cables",
}


def __getattr__(name: str):
    """Load a public name from its layer on first use (PEP 562)."""
    try:
        module = _PUBLIC[name]
    except KeyError:
        raise AttributeError(f"module 'deembed' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(list(globals()) + list(_PUBLIC))


__all__ = sorted(_PUBLIC)
