"""How many samples of a trace are read and checked at a time, unless the user says otherwise.

A trace is read, vetted and checked chunk by chunk, the next chunk read on a thread while
this one is checked. A quarter of a million samples (6 MB a column) keeps that pipeline
short: its memory is a few chunks whatever the trace's length, and the work that cannot
overlap (reading the first chunk, checking the last) is a small part of the whole. A
million samples a chunk checks no faster, holds four times the memory, and leaves the
last chunk's check (about 30 ms) without a reader beside it (``benchmarks/trace_check.py``
and ``benchmarks/trace_memory.py`` measure both).
"""

DEFAULT_CHUNK_ROWS = 250_000
"""Samples read and checked at a time (``--chunk-rows``)."""
