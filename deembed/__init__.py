"""deembed: remove a feed line from an antenna sweep taken at the far end of it.

The library in a few names::

    from deembed import read_sweep, Section, Line, LossModel, catalog, correct

    sweep = read_sweep("shack.s1p")
    line = Line((catalog()["rg213"].section(30.0),))
    result = correct(sweep, line)          # result.gamma_feed: the feedpoint's reflection
    net = result.feedpoint_network()       # the same as a scikit-rf Network

Importing the package loads numpy only; scikit-rf, matplotlib and pandas are imported when a
function that needs them is called.
"""
from .errors import DeembedError, InputFileError, OptionError
from .line import Line, LossModel, MeasuredTwoPort, Section, abcd_to_s, s_to_abcd
from .core import Correction, correct, deembed_network, embed_gamma, feedpoint_gamma
from .sweep import Sweep, one_port
from .cables import Cable, catalog

__version__ = "0.1.0"


def read_sweep(path, **kwargs):
    """Read a Touchstone sweep (see :func:`deembed.touchstone.read_sweep`)."""
    from .touchstone import read_sweep as _read

    return _read(path, **kwargs)


__all__ = [
    "Cable", "Correction", "DeembedError", "InputFileError", "Line", "LossModel", "MeasuredTwoPort",
    "OptionError", "Section", "Sweep", "abcd_to_s", "catalog", "correct", "deembed_network",
    "embed_gamma", "feedpoint_gamma", "one_port", "read_sweep", "s_to_abcd",
]
