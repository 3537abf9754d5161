#!/usr/bin/env python3
"""Groups a flat `perf report` (symbols with their share of CPU samples) into the
parts of an audit: reading, validation, mathematics, formatting, kernel, allocation.

Usage: perf report --no-children --sort dso,symbol --stdio -i perf.data | benches/profile_shares.py

Symbols are matched by name; inlined code is charged to the function it was inlined
into, and closures that the compiler left anonymous (call_mut, Map::next) are counted
as "other", so the shares are approximate.
"""
import re
import sys

GROUPS = [
    ("kernel (file writing, page faults)", r"^\[k\]"),
    ("reading (polars CSV parse, SHA-256)", r"polars|fast_float|simdutf8|sha2::|arrow"),
    ("mathematics (bounds, sample sizes, growth)",
     r"gapcert::theory::|__ieee754_(log|exp|pow)|__log1p|__expm1|__log2|^\[\.\] (log|exp|round|pow)(@|$)"),
    ("validation (typing cells, checks, timestamps)",
     r"gapcert::ingest::|chrono::|dec2flt|str>::trim|AuditScope::observe|FromStr"),
    ("formatting (JSON lines, numbers)", r"zmij|itoa|gapcert::report::|serde_json"),
    ("allocation and copying", r"malloc|free|_int_|realloc|memmove|memcpy|memset|unlink_chunk|cfree"),
    ("audit bookkeeping (verdicts, findings, caches)", r"gapcert::audit::|hashbrown|foldhash|gapcert::engine"),
]

shares = {name: 0.0 for name, _ in GROUPS}
other = 0.0
for line in sys.stdin:
    match = re.match(r"\s*([0-9.]+)%\s+\S+\s+(\[[.k]\].*)$", line)
    if not match:
        continue
    share, symbol = float(match.group(1)), match.group(2).strip()
    for name, pattern in GROUPS:
        if re.search(pattern, symbol):
            shares[name] += share
            break
    else:
        other += share
for name, _ in GROUPS:
    print(f"{shares[name]:5.1f} %  {name}")
print(f"{other:5.1f} %  other (anonymous closures, rayon, threads)")
