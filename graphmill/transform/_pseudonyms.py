"""Keyed pseudonyms for vertex IDs: HMAC-SHA256 over (vertex type, original ID).

A pseudonym is the first 128 bits of ``HMAC-SHA256(key, type + "\\x00" + id)`` (RFC 2104
HMAC with SHA-256, FIPS 180-4) written as 32 lowercase hex digits. Vertex type names are
identifiers and hold no NUL byte, so the message is unambiguous. The key comes from the
environment variable the spec names and goes nowhere else: not into the manifest, not into
logs, not into error messages.

Speed: no vectorized HMAC exists in pyarrow or numpy, so the digests are computed per ID in
one generator over precomputed inner and outer SHA-256 states (1.1-1.8 s per million IDs
on the project machine); hex encoding and the Arrow string array are built with numpy.
"""

from __future__ import annotations

import hashlib
import hmac
import os
from collections.abc import Callable

import numpy as np
import pyarrow as pa

from graphmill._text import plural
from graphmill.errors import InputError, SpecError

SCHEME = "hmac-sha256-128"
DIGEST_BYTES = 16
MIN_KEY_BYTES = 16
_BLOCK = 64  # SHA-256 block size in bytes (FIPS 180-4, section 1)
_HEX = np.frombuffer(b"0123456789abcdef", dtype=np.uint8)


def pseudonym_key(env_name: str) -> bytes:
    """The secret key from ``env_name``; :class:`SpecError` naming the variable if unusable."""
    value = os.environ.get(env_name)
    if not value:
        raise SpecError(
            f"pseudonymized IDs need a secret key, and the environment variable {env_name} "
            "is not set",
            key_path="ids.key_env",
            hint=f"set {env_name} to a random secret of at least {MIN_KEY_BYTES} characters",
        )
    key = value.encode("utf-8")
    if len(key) < MIN_KEY_BYTES:
        raise SpecError(
            f"the key in {env_name} is shorter than {MIN_KEY_BYTES} bytes",
            key_path="ids.key_env",
            hint=f"set {env_name} to a longer random secret",
        )
    return key


def key_fingerprint(key: bytes) -> str:
    """A short keyed hash of a fixed text: equal for equal keys, so two bundles' pseudonyms can
    be known to match, and revealing nothing about the key or any ID."""
    return hmac.new(key, b"graphmill key fingerprint", hashlib.sha256).hexdigest()[:16]


def pseudonymizer(vertex_type: str, key: bytes) -> Callable[[pa.Array], pa.Array]:
    """A function mapping an array of IDs of ``vertex_type`` to their pseudonyms."""

    def apply(ids: pa.Array) -> pa.Array:
        return pseudonyms(vertex_type, ids, key)

    return apply


def pseudonyms(vertex_type: str, ids: pa.Array, key: bytes) -> pa.Array:
    """One 32-hex-digit pseudonym per ID (string array, same length, no nulls).

    >>> pseudonyms("member", pa.array(["a"]), b"0123456789abcdef").to_pylist()[0][:8]
    'd6f74367'
    """
    if ids.null_count:
        n = ids.null_count
        raise InputError(
            f"{plural(n, vertex_type + ' vertex', vertex_type + ' vertices')} "
            f"{'has' if n == 1 else 'have'} no ID"
        )
    inner, outer = _keyed_states(key)
    prefix = vertex_type.encode("utf-8") + b"\x00"
    raw = ids.cast(pa.binary()).to_pylist()

    def digest(value: bytes) -> bytes:
        h = inner.copy()
        h.update(prefix + value)
        o = outer.copy()
        o.update(h.digest())
        return o.digest()[:DIGEST_BYTES]

    packed = b"".join(map(digest, raw))
    return _hex_strings(np.frombuffer(packed, dtype=np.uint8), len(raw))


def _keyed_states(key: bytes) -> tuple[hashlib._Hash, hashlib._Hash]:
    """SHA-256 states after absorbing ``key XOR ipad`` and ``key XOR opad`` (RFC 2104)."""
    if len(key) > _BLOCK:
        key = hashlib.sha256(key).digest()
    padded = np.frombuffer(key.ljust(_BLOCK, b"\x00"), dtype=np.uint8)
    inner = hashlib.sha256((padded ^ 0x36).tobytes())
    outer = hashlib.sha256((padded ^ 0x5C).tobytes())
    return inner, outer


def _hex_strings(digests: np.ndarray, count: int) -> pa.Array:
    """Lowercase hex of ``count`` digests of DIGEST_BYTES each, as an Arrow string array."""
    width = 2 * DIGEST_BYTES
    chars = np.empty(digests.size * 2, dtype=np.uint8)
    chars[0::2] = _HEX[digests >> 4]
    chars[1::2] = _HEX[digests & 0x0F]
    offsets = np.arange(count + 1, dtype=np.int32) * width
    return pa.StringArray.from_buffers(count, pa.py_buffer(offsets), pa.py_buffer(chars))
