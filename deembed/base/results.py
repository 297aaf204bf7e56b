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


class _Unset:
    """The value of a field that is not set (see :data:`UNSET`)."""

    _one = None

    def __new__(cls):  # one instance, also after pickling (results cross process boundaries)
        if cls._one is None:
            cls._one = super().__new__(cls)
        return cls._one

    def __reduce__(self):
        return (_Unset, ())

    def __repr__(self):
        return "UNSET"


UNSET = _Unset()
"""Default of a field that only some outputs have but that may be null when it is there (a correction's
``trim``, say): a field holding UNSET is no key of the result and not in its JSON form. (An OPTIONAL field
is left out when None instead.)"""

INTERNAL_KEY = "deembed_internal"
INTERNAL = {INTERNAL_KEY: True}
"""Metadata of a field that travels with a result between modules but is no part of its JSON form nor of its
keys (``dataclasses.field(default=(), metadata=INTERNAL)``): the site job's files read by an antenna, say."""


class Result(Mapping):
    """Base of the typed results (use with ``@dataclass(frozen=True)``)."""

    OPTIONAL: tuple = ()
    """Fields left out of :meth:`to_dict` when they are None (keys that only some outputs have)."""

    def _shown(self, name: str) -> bool:
        """Whether the field ``name`` is one of the result's keys: not :data:`UNSET`, nor an OPTIONAL field that
        is None (a result may say more, overriding this)."""
        value = getattr(self, name)
        return value is not UNSET and not (name in self.OPTIONAL and value is None)

    def to_dict(self) -> dict:
        """The JSON form: field name -> value, nested results as dicts."""
        return {name: _plain(getattr(self, name)) for name in self._keys()}

    def _keys(self):
        return [f.name for f in dataclasses.fields(self)
                if not f.metadata.get(INTERNAL_KEY) and self._shown(f.name)]

    def __getitem__(self, key):
        if key not in self._keys():
            raise KeyError(key)
        return getattr(self, key)

    def __iter__(self):
        return iter(self._keys())

    def __len__(self):
        return len(self._keys())


__all__ = ["INTERNAL", "UNSET", "Result"]
