"""A GraphBinary reader with a short path for the types a page is made of.

gremlinpython's reader spends most of a page's client time in dispatch: each value goes
through ``read_object`` (an ABC ``isinstance`` check), ``to_object``, a class method, an
``is_null`` helper and a lambda. :class:`PageReader` decodes traversers, lists, strings,
integers, doubles and booleans in one method, with the same results and the same null
handling; every other type takes the driver's own deserializer.
"""

from __future__ import annotations

import io
import struct
from typing import Any

from gremlin_python.process.traversal import Traverser
from gremlin_python.structure.io.graphbinaryV1 import DataType, GraphBinaryReader

_INT32 = struct.Struct(">i").unpack
_INT64 = struct.Struct(">q").unpack
_DOUBLE = struct.Struct(">d").unpack
_NULL = DataType.null.value
_INT, _LONG, _STRING = DataType.int.value, DataType.long.value, DataType.string.value
_DOUBLE_CODE, _LIST = DataType.double.value, DataType.list.value
_TRAVERSER, _BOOLEAN = DataType.traverser.value, DataType.boolean.value
_SHORT_PATH = frozenset({_INT, _LONG, _STRING, _DOUBLE_CODE, _LIST, _TRAVERSER, _BOOLEAN})


class PageReader(GraphBinaryReader):
    """``GraphBinaryReader`` whose nullable reads of common types skip the dispatch."""

    def read_object(self, b: Any) -> Any:
        if type(b) is io.BytesIO:
            return self.to_object(b)
        return super().read_object(b)

    def to_object(self, buff: Any, data_type: Any = None, nullable: bool = True) -> Any:
        if data_type is not None or not nullable:
            return super().to_object(buff, data_type, nullable)
        read = buff.read
        code = read(1)[0]
        if code not in _SHORT_PATH:
            if code == _NULL:
                read(1)
                return None
            try:
                objectify = self._deserializer_by_type_code[code]
            except KeyError:
                raise ValueError(f"{code!r} is not a valid DataType") from None
            return objectify(buff, self, nullable)
        if read(1)[0] == 0x01:  # the value flag: null
            return None
        if code == _STRING:
            return read(_INT32(read(4))[0]).decode("utf-8")
        if code == _LIST:
            to_object = self.to_object
            return [to_object(buff) for _ in range(_INT32(read(4))[0])]
        if code == _DOUBLE_CODE:
            return _DOUBLE(read(8))[0]
        if code == _LONG:
            return _INT64(read(8))[0]
        if code == _INT:
            return _INT32(read(4))[0]
        if code == _TRAVERSER:
            bulk = _INT64(read(8))[0]
            return Traverser(self.to_object(buff), bulk=bulk)
        return read(1)[0] == 0x01  # boolean
