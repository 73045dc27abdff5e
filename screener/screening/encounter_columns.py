"""Encounters packed as columns for the trip from a worker back to the parent.

A screening task's result travels by pickle (a local spawn pool or a Dask cluster).  Pickled one
by one, 17,923 Encounter objects (each with two small arrays, four tuples and two dicts) took
0.52 s to write in the worker and 0.41 s to read in the parent, and the worker writing them
cannot start its next task.  As columns (one float array per kind of number, the variable-
length profiles and paths concatenated with their lengths) the same values travel bitwise
unchanged at a fraction of that cost; the parent builds the objects again.

`pack` returns None for a list it cannot put in columns exactly (a field of another shape or
type than the engine makes), and the caller then pickles the objects as they are.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from typing import Sequence

import numpy as np

from .encounter import Encounter

_FIELDS = tuple(f.name for f in dataclasses.fields(Encounter))
_TEXT = ("primary", "primary_name", "secondary", "secondary_name")
_NUMBERS = ("tca_s", "window_jd", "window_fr", "miss_km", "radial_km", "in_track_km",
            "cross_track_km", "relative_speed_km_s", "crossing_angle_deg", "primary_alt_km",
            "secondary_alt_km", "primary_age_days", "secondary_age_days", "profile_half_s")
_OPTIONAL = ("entry_s", "exit_s")                   # None or a number
_VECTORS = ("primary_r_km", "primary_v_km_s", "secondary_r_km", "secondary_v_km_s")
_ARRAYS = {"range_profile_km": (), "relative_path_km": (3,)}   # float64, rows of this shape
_DICTS = ("risk", "identity")
_FLOAT_TYPES = {float, np.float64}


def _types(column: list) -> set:
    return set(map(type, column))


def pack(encs: Sequence[Encounter]) -> dict | None:
    """The encounters as columns, or None when one of them does not fit the columns (a
    numpy float64 number comes back as the equal Python float)."""
    if _types(encs) - {Encounter} or not encs:
        return None
    dicts = [e.__dict__ for e in encs]
    col = {k: [d[k] for d in dicts] for k in _FIELDS}
    if (any(_types(col[k]) - {str} for k in _TEXT)
            or any(_types(col[k]) - _FLOAT_TYPES for k in _NUMBERS)
            or any(_types(col[k]) - _FLOAT_TYPES - {type(None)} for k in _OPTIONAL)
            or any(_types(col[k]) - {dict} for k in _DICTS)
            or any(_types(col[k]) - {tuple} or set(map(len, col[k])) != {3}
                   or set(map(type, itertools.chain.from_iterable(col[k]))) - _FLOAT_TYPES
                   for k in _VECTORS)
            or any(_types(col[k]) - {np.ndarray} or {a.dtype for a in col[k]} != {np.dtype(float)}
                   or {a.shape[1:] for a in col[k]} != {tail} for k, tail in _ARRAYS.items())):
        return None
    out = {"n": len(encs), "text": [col[k] for k in _TEXT], "dicts": [col[k] for k in _DICTS],
           "numbers": np.array([col[k] for k in _NUMBERS], float)}
    out["present"] = np.array([[x is not None for x in col[k]] for k in _OPTIONAL], bool)
    out["optional"] = np.array([[math.nan if x is None else x for x in col[k]] for k in _OPTIONAL],
                               float)
    out["vectors"] = [np.array(col[k], float) for k in _VECTORS]
    for k in _ARRAYS:
        out[k] = (np.array(list(map(len, col[k])), np.int64), np.concatenate(col[k]))
    return out


def unpack(cols: dict) -> list[Encounter]:
    """The Encounter objects again, every value equal to the packed one (floats bitwise); an
    encounter's profile and path are C-contiguous views into one array per column."""
    n = cols["n"]
    values = dict(zip(_TEXT, cols["text"]))
    values.update(zip(_DICTS, cols["dicts"]))
    values.update(zip(_NUMBERS, cols["numbers"].tolist()))
    for k, x, has in zip(_OPTIONAL, cols["optional"].tolist(), cols["present"].tolist()):
        values[k] = [a if h else None for a, h in zip(x, has)]
    for k, x in zip(_VECTORS, cols["vectors"]):
        values[k] = list(zip(*x.T.tolist()))
    for k, tail in _ARRAYS.items():
        lens, flat = cols[k]
        if n and (lens == lens[0]).all():       # the usual case: rows of one length
            values[k] = list(flat.reshape(n, int(lens[0]), *tail))
        else:
            values[k] = np.split(flat, np.cumsum(lens)[:-1]) if n else []
    out = []
    new = Encounter.__new__
    for row in zip(*(values[k] for k in _FIELDS)):
        e = new(Encounter)
        e.__dict__ = dict(zip(_FIELDS, row))
        out.append(e)
    return out


__all__ = ["pack", "unpack"]
