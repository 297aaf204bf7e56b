"""Option values converted by plain Python where that gives typer's own answer, so a command need not load pydantic.

typer (0.2x) converts every option value through a pydantic ``TypeAdapter``, and building the first one
imports pydantic, which costs a command more than numpy and typer together take to import. Our options are
text, whole numbers, numbers and flags; for those :func:`install` puts a converter in front of typer's:

* text (``str``, a list of ``str``), flags already read as ``True``/``False`` and defaults that are already
  numbers: the value as given (a number default of a ``float`` option as a float), what the adapter returns;
* a whole number written as digits (``"2"``, ``"-3"``) and a number written in decimal or exponent form
  (``"1.5"``, ``"2e3"``): ``int()`` / ``float()``, the adapter's result for such text;
* anything else (``"1.0"`` for a whole number, ``" 2"``, ``"abc"``, ``"inf"``) goes to typer's own adapter
  unchanged, so its lenient readings and its error messages stay exactly typer's.

When typer's internals are not the ones this was written for, nothing is installed and typer works as it
always does (only slower to start). tests/test_plainparams.py checks the converter against typer's adapter.
"""
from __future__ import annotations

import re
import typing

_INT = re.compile(r"[+-]?[0-9]+\Z")
_FLOAT = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?\Z")
_MARK = "_deembed_plain"


def _kind(annotation):
    """'str', 'bool', 'int', 'float', 'strlist' or None for what this module can convert."""
    origin = typing.get_origin(annotation)
    args = typing.get_args(annotation)
    if origin is typing.Union and len(args) == 2 and type(None) in args:  # Optional[X]
        return _kind(args[0] if args[1] is type(None) else args[1])
    if annotation is str:
        return "str"
    if annotation is bool:
        return "bool"
    if annotation is int:
        return "int"
    if annotation is float:
        return "float"
    if origin is list and args == (str,):
        return "strlist"
    return None


def install() -> bool:
    """Put the plain converter in front of typer's; True when installed (or already there)."""
    try:
        from typer import _coercion, core
        base = _coercion.RuntimeParam
        typers_own = core.build_runtime_param
    except (ImportError, AttributeError):
        return False
    if getattr(typers_own, _MARK, False):
        return True
    import dataclasses

    @dataclasses.dataclass(frozen=True)
    class PlainRuntimeParam(base):
        descriptor: typing.Any = None
        kind: str = "str"

        def _coerce_value(self, value, param, ctx):
            if self.kind == "str" and isinstance(value, str):
                return value
            if self.kind == "bool" and isinstance(value, bool):
                return value
            if self.kind == "strlist" and isinstance(value, (list, tuple)) and all(isinstance(v, str) for v in value):
                return list(value)
            if self.kind == "int" and type(value) is int:  # a default
                return value
            if self.kind == "float" and type(value) in (int, float):  # a default
                return float(value)
            if self.kind == "int" and isinstance(value, str) and _INT.match(value):
                return int(value)
            if self.kind == "float" and isinstance(value, str) and _FLOAT.match(value):
                return float(value)
            return typers_own(self.descriptor)._coerce_value(value, param=param, ctx=ctx)

    def build_runtime_param(descriptor):
        kind = None
        if getattr(descriptor, "file_annotation", None) is None and not _has_constraints(descriptor):
            kind = _kind(getattr(descriptor, "annotation", None))
        if kind is None:
            return typers_own(descriptor)
        return PlainRuntimeParam(annotation=descriptor.annotation, parameter_info=descriptor.parameter_info,
                                 descriptor=descriptor, kind=kind)

    setattr(build_runtime_param, _MARK, True)
    core.build_runtime_param = build_runtime_param
    return True


def _has_constraints(descriptor) -> bool:
    """Options with a custom parser, a range or choices keep typer's converter."""
    info = getattr(descriptor, "parameter_info", None)
    if info is None:
        return True
    for attr in ("parser", "click_type", "min", "max"):
        if getattr(info, attr, None) is not None:
            return True
    return bool(getattr(info, "clamp", False))
