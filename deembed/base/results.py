"""Typed results: frozen dataclasses that carry a result between modules and give its JSON form.

A result class derives from :class:`Result`. ``to_dict()`` is the output's JSON form, with the keys the
JSON Schema in ``deembed/render/schemas/`` documents (nested results become nested dicts). Results also
read like that dict (``budget["at_antenna"]["delivered_w"]``), so code written against the JSON form
keeps working; they cannot be changed after they are made (use :func:`dataclasses.replace`).
"""
from __future__ import annotations

import dataclasses
from collections.abc import Mapping


def _plain(value):
    if isinstance(value, Result):
        return value.to_dict()
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    return value


class Result(Mapping):
    """Base of the typed results (use with ``@dataclass(frozen=True)``)."""

    OPTIONAL: tuple = ()
    """Fields left out of :meth:`to_dict` when they are None (keys that only some outputs have)."""

    def to_dict(self) -> dict:
        """The JSON form: field name -> value, nested results as dicts."""
        return {f.name: _plain(getattr(self, f.name)) for f in dataclasses.fields(self)
                if not (f.name in self.OPTIONAL and getattr(self, f.name) is None)}

    def _keys(self):
        return [f.name for f in dataclasses.fields(self)
                if not (f.name in self.OPTIONAL and getattr(self, f.name) is None)]

    def __getitem__(self, key):
        if key not in self._keys():
            raise KeyError(key)
        return getattr(self, key)

    def __iter__(self):
        return iter(self._keys())

    def __len__(self):
        return len(self._keys())


__all__ = ["Result"]
