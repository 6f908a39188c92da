"""Touchstone 1.1 files of two-port S-parameters: the writer ``portwise twoport`` uses, and a reader.

References
----------
Touchstone File Format Specification, version 1.1, EIA/IBIS Open Forum, 2002
(option line ``# <unit> <parameter> <format> R <n>``; 2-port data order
N11 N21 N12 N22).
"""
from __future__ import annotations

import numpy as np


def touchstone(freqs, s, z0: float = 50.0, comments: list[str] | None = None) -> str:
    """Touchstone 1.1 text of 2-port S-parameters, real/imaginary format, frequencies in Hz.

    Examples
    --------
    >>> txt = touchstone([1e3], np.array([[[0.1, 0.9], [0.9, 0.1]]]), 75.0)
    >>> txt.splitlines()[-2]
    '# HZ S RI R 75'
    """
    lines = [f"! {t}" for t in (comments or [])]
    lines.append(f"# HZ S RI R {z0:g}")
    for f, m in zip(freqs, s):
        cells = [m[0, 0], m[1, 0], m[0, 1], m[1, 1]]  # 2-port order: N11 N21 N12 N22
        lines.append(f"{float(f):.10e} " + " ".join(f"{v.real:.12e} {v.imag:.12e}" for v in cells))
    return "\n".join(lines) + "\n"


_FREQ_UNIT = {"HZ": 1.0, "KHZ": 1e3, "MHZ": 1e6, "GHZ": 1e9}


def read_touchstone(text: str):
    """Read 2-port S data from Touchstone 1.1 text (any of RI, MA, DB; HZ..GHZ).

    Returns
    -------
    freqs : ndarray (N,), Hz
    s : ndarray (N, 2, 2)
    z0 : float
    """
    unit, fmt, z0 = 1e9, "MA", 50.0  # the format's defaults: GHZ S MA R 50
    values: list[float] = []
    for raw in text.splitlines():
        line = raw.split("!", 1)[0].strip()
        if not line:
            continue
        if line.startswith("#"):
            words = line[1:].upper().split()
            i = 0
            while i < len(words):
                w = words[i]
                if w in _FREQ_UNIT:
                    unit = _FREQ_UNIT[w]
                elif w in ("RI", "MA", "DB"):
                    fmt = w
                elif w == "R":
                    z0 = float(words[i + 1])
                    i += 1
                elif w != "S":
                    raise ValueError(f"unsupported option '{w}'")
                i += 1
            continue
        values.extend(float(v) for v in line.split())
    if len(values) % 9:
        raise ValueError("2-port data come in groups of 9 numbers")
    data = np.array(values, float).reshape(-1, 9)
    freqs = data[:, 0] * unit
    a, b = data[:, 1::2], data[:, 2::2]
    if fmt == "RI":
        v = a + 1j * b
    else:
        mag = a if fmt == "MA" else 10 ** (a / 20)
        v = mag * np.exp(1j * np.radians(b))
    s = np.empty((len(freqs), 2, 2), complex)
    s[:, 0, 0], s[:, 1, 0], s[:, 0, 1], s[:, 1, 1] = v[:, 0], v[:, 1], v[:, 2], v[:, 3]
    return freqs, s, z0
