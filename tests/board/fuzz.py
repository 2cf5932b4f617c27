"""Byte-level mutations of real files for the readers' robustness tests (hypothesis strategies)."""

from __future__ import annotations

from hypothesis import strategies as st

#: (operation, position, bytes): 0 overwrite, 1 delete, 2 insert, 3 truncate, 4 duplicate a span
MUTATIONS = st.lists(
    st.tuples(st.integers(0, 4), st.integers(0, 2**31), st.binary(min_size=1, max_size=24)), min_size=1, max_size=6
)


def apply(data: bytes, ops: list[tuple[int, int, bytes]]) -> bytes:
    d = bytearray(data)
    for op, pos, chunk in ops:
        if not d:
            d = bytearray(chunk)
            continue
        i = pos % len(d)
        if op == 0:
            d[i : i + len(chunk)] = chunk
        elif op == 1:
            del d[i : i + len(chunk)]
        elif op == 2:
            d[i:i] = chunk
        elif op == 3:
            del d[i:]
        else:
            j = (pos // 7) % len(d)
            d[i:i] = d[j : j + 8 * len(chunk)]
    return bytes(d)
