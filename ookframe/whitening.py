"""LFSR whitening: XOR a pseudo-random mask over the whitened sections (self-inverse).

Register convention (Fibonacci LFSR, ``width`` = w, ``poly`` = P with the x^w term implied):
the register r holds the next w sequence bits, bit 0 first. Each step outputs bit 0, then
shifts right and feeds back the parity of the tapped bits into bit w-1::

    out = r & 1
    r = (r >> 1) | (parity(r & P) << (w - 1))

so a term x^k of the polynomial taps register bit k, and the sequence obeys
s[n+w] = XOR of s[n+k] over the terms x^k (k < w). PN9 = x^9 + x^5 + 1 is w = 9,
P = 0x021; from seed 0x1FF its output, taken 8 steps at a time with the first output as
the least significant bit, gives the bytes FF E1 1D 9A ED 85 33 24 ... — the PN9
whitening bytes of common sub-GHz transceivers.

Those transceivers XOR each whitening byte onto a data byte sent MSB first, so the mask
on air is each byte's bits MSB first: ``lfsr_bits`` returns that mask (bit-reversed within
each group of 8 steps), and ``np.packbits(lfsr_bits(pn9, 8 * n))`` reads FF E1 1D 9A ...
The plain sequence, one bit per step, is ``lfsr_sequence``.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from ._require import require, require_int
from .errors import SpecError
from .spec.model import WhiteningSpec

MIN_WIDTH = 2
MAX_WIDTH = 32


def check_lfsr(width: int, poly: int, state: int, path: str = "whitening") -> None:
    """Raise SpecError unless (width, poly, state) define a usable LFSR."""
    if isinstance(width, bool) or not isinstance(width, int) or not MIN_WIDTH <= width <= MAX_WIDTH:
        raise SpecError(f"{path}.width", f"must be an integer in {MIN_WIDTH}..{MAX_WIDTH}, "
                        f"got {width!r}")
    top = (1 << width) - 1
    if isinstance(poly, bool) or not isinstance(poly, int) or not 1 <= poly <= top:
        raise SpecError(f"{path}.poly", f"must be an integer in 0x1..0x{top:X} (the x^{width} "
                        f"term is implied), got {poly!r}")
    if not poly & 1:
        raise SpecError(f"{path}.poly", f"must include the x^0 term (an odd value), "
                        f"got 0x{poly:X}")
    if isinstance(state, bool) or not isinstance(state, int) or not 1 <= state <= top:
        raise SpecError(f"{path}.seed", f"must be a non-zero integer in 0x1..0x{top:X} "
                        f"({width} bits), got {state!r}")


def _run(width: int, poly: int, state: int, n_bits: int) -> tuple[bytes, int]:
    top_shift = width - 1
    out = bytearray(n_bits)
    r = state
    for i in range(n_bits):
        out[i] = r & 1
        r = (r >> 1) | (((r & poly).bit_count() & 1) << top_shift)
    return bytes(out), r


def lfsr_sequence(width: int, poly: int, state: int, n_bits: int) -> tuple[np.ndarray, int]:
    """Return (n_bits output bits uint8, register state after them); chunks chain exactly."""
    check_lfsr(width, poly, state)
    if n_bits < 0:
        raise ValueError(f"n_bits must be >= 0, got {n_bits}")
    raw, end = _run(width, poly, state, n_bits)
    return np.frombuffer(raw, dtype=np.uint8).copy(), end


@lru_cache(maxsize=64)
def _mask(width: int, poly: int, seed: int, n_bytes: int) -> np.ndarray:
    raw, _ = _run(width, poly, seed, 8 * n_bytes)
    mask = np.frombuffer(raw, dtype=np.uint8).reshape(n_bytes, 8)[:, ::-1].reshape(-1).copy()
    mask.flags.writeable = False
    return mask


def lfsr_bits(spec: WhiteningSpec, n_bits: int) -> np.ndarray:
    """Return the first ``n_bits`` of the whitening mask (uint8 0/1, MSB-first bytes).

    kind "none" gives zeros. The mask of n bits is the prefix of any longer mask.
    """
    require(spec, WhiteningSpec, "spec")
    require_int(n_bits, "n_bits")
    if n_bits < 0:
        raise ValueError(f"n_bits must be >= 0, got {n_bits}")
    if spec.kind == "none":
        return np.zeros(n_bits, np.uint8)
    check_lfsr(spec.width, spec.poly, spec.seed)
    n_bytes = max(8, 1 << max(0, (n_bits + 7) // 8 - 1).bit_length())  # cache in powers of 2
    return _mask(spec.width, spec.poly, spec.seed, n_bytes)[:n_bits].copy()


def whiten(bits: np.ndarray, spec: WhiteningSpec) -> np.ndarray:
    """Return ``bits`` XOR the mask along the last axis (1-D, or 2-D frames x bits)."""
    require(spec, WhiteningSpec, "spec")
    b = np.asarray(bits, dtype=np.uint8)
    if b.ndim < 1:
        raise ValueError("bits must be at least 1-D")
    return b ^ lfsr_bits(spec, b.shape[-1])
