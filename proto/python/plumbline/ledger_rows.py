"""Read a Plumbline ledger's stored features from Python, without plumbd.

Since ledger schema 7 a score's features are packed in the order of the
version that scored it (README "The ledger file"); the view ``ledger_scores``
gives each row beside its ``layout`` (a ``plumbline.v1.RowLayout`` as JSON).
Rows written before schema 7 hold a JSON object and are returned as parsed::

    import sqlite3
    from plumbline.ledger_rows import stored_features

    db = sqlite3.connect("var/ledger.db")
    for record_id, features, layout in db.execute(
            "SELECT record_id, features, layout FROM ledger_scores"):
        print(record_id, stored_features(features, layout))
        # {'distance_km': 4.2, 'region': 'rural', 'service': None}

Standard library only. This is a second implementation of the format
written by daemon/scoring/packed_row.cc; the tests compare the two.
"""

from __future__ import annotations

import json
import struct
from typing import Any, Dict, Optional, Union

MARKER = 0x01
_NOT_SENT, _NULL, _INTEGER = 0, 1, 2
_DECIMAL_FIRST, _DECIMAL_LAST = 3, 8  # k = tag - 2 digits after the point
_FLOAT, _DOUBLE, _LEVEL, _TEXT = 9, 10, 11, 12


class PackedRowError(ValueError):
    """A stored row that does not decode under its layout."""


def _varint(data: bytes, pos: int) -> "tuple[int, int]":
    result = 0
    shift = 0
    while True:
        if pos >= len(data):
            raise PackedRowError(f"packed row: truncated at byte {pos}")
        byte = data[pos]
        pos += 1
        result |= (byte & 0x7F) << shift
        if not byte & 0x80:
            return result, pos
        shift += 7
        if shift >= 64:
            raise PackedRowError("packed row: a varint longer than 10 bytes")


def _unzigzag(z: int) -> int:
    return (z >> 1) ^ -(z & 1)


def stored_features(stored: Union[bytes, str],
                    layout: Optional[Union[str, Dict[str, Any]]]
                    ) -> Dict[str, Any]:
    """The features of one stored row, by name, as the caller sent them.

    ``stored`` is the ``features`` column (bytes for a packed row, text for
    a JSON row of schema < 7); ``layout`` the ``layout`` column (JSON text or
    its parsed dict; None for JSON rows). Features the caller did not send
    are left out; features sent as missing are None. Numbers are floats, bit
    for bit as scored; levels are their text.
    """
    if isinstance(stored, str):
        stored = stored.encode("utf-8")
    if not stored or stored[0] != MARKER:
        return json.loads(stored.decode("utf-8"))
    if layout is None:
        raise PackedRowError("a packed row without its layout")
    if isinstance(layout, str):
        layout = json.loads(layout)
    columns = layout.get("columns", [])
    n = len(columns)
    tags_end = 1 + (n + 1) // 2
    if len(stored) < tags_end:
        raise PackedRowError("packed row: truncated in its tags")
    pos = tags_end
    out: Dict[str, Any] = {}
    for f, column in enumerate(columns):
        tag = (stored[1 + f // 2] >> (4 * (f % 2))) & 0x0F
        name = column["name"]
        if tag == _NOT_SENT:
            continue
        if tag == _NULL:
            out[name] = None
        elif tag == _INTEGER or _DECIMAL_FIRST <= tag <= _DECIMAL_LAST:
            z, pos = _varint(stored, pos)
            k = 0 if tag == _INTEGER else tag - 2
            # The same IEEE division as the writer's check: m / 10^k.
            out[name] = float(_unzigzag(z)) / float(10 ** k)
        elif tag == _FLOAT:
            if pos + 4 > len(stored):
                raise PackedRowError("packed row: truncated float")
            out[name] = struct.unpack_from("<f", stored, pos)[0]
            pos += 4
        elif tag == _DOUBLE:
            if pos + 8 > len(stored):
                raise PackedRowError("packed row: truncated double")
            out[name] = struct.unpack_from("<d", stored, pos)[0]
            pos += 8
        elif tag == _LEVEL:
            index, pos = _varint(stored, pos)
            levels = column.get("levels", [])
            if index >= len(levels):
                raise PackedRowError(
                    f"packed row: level index {index} past the "
                    f"{len(levels)} levels of {name!r}")
            out[name] = levels[index]
        elif tag == _TEXT:
            length, pos = _varint(stored, pos)
            if pos + length > len(stored):
                raise PackedRowError("packed row: truncated text")
            out[name] = stored[pos:pos + length].decode("utf-8")
            pos += length
        else:
            raise PackedRowError(f"packed row: unknown tag {tag}")
    if pos != len(stored):
        raise PackedRowError(
            f"packed row: {len(stored) - pos} bytes past its last value")
    return out
