"""Groups the copies counted by copy_census.c by the gapcert function that made them.

Usage: python3 report.py BINARY CENSUS_FILE [TOP]
Return addresses inside the binary are turned into symbol names with `nm` (release
builds keep their symbol table) after mapping the run-time address back to a virtual
address through the binary's LOAD segments (`readelf -lW`).
"""
import bisect
import subprocess
import sys

binary, census = sys.argv[1], sys.argv[2]
top = int(sys.argv[3]) if len(sys.argv) > 3 else 25

maps, records = [], []
for line in open(census):
    if line.startswith('MAP '):
        fields = line[4:].split()
        low, high = (int(x, 16) for x in fields[0].split('-'))
        path = fields[5] if len(fields) > 5 else ''
        maps.append((low, high, int(fields[2], 16), path))
    elif line.startswith('RA '):
        _, address, calls, size = line.split()
        records.append((int(address, 16), int(calls), int(size)))

segments = []  # (file offset, size, virtual address) of each LOAD segment
for line in subprocess.run(['readelf', '-lW', binary], capture_output=True, text=True).stdout.splitlines():
    fields = line.split()
    if fields and fields[0] == 'LOAD':
        segments.append((int(fields[1], 16), int(fields[4], 16), int(fields[2], 16)))

symbols = []
for line in subprocess.run(['nm', '-C', '-n', '--defined-only', binary], capture_output=True, text=True).stdout.splitlines():
    fields = line.split(' ', 2)
    if len(fields) == 3 and fields[1] in 'tTwW':
        symbols.append((int(fields[0], 16), fields[2]))
starts = [s[0] for s in symbols]


def function_of(address):
    for low, high, offset, path in maps:
        if low <= address < high:
            if path != binary and not binary.endswith('/' + path.split('/')[-1]):
                return path.split('/')[-1] or '(anonymous)'
            file_offset = address - low + offset
            for seg_offset, seg_size, seg_vaddr in segments:
                if seg_offset <= file_offset < seg_offset + seg_size:
                    vaddr = file_offset - seg_offset + seg_vaddr
                    i = bisect.bisect_right(starts, vaddr) - 1
                    return symbols[i][1][:140] if i >= 0 else hex(vaddr)
    return '(unknown)'


by_function = {}
for address, calls, size in records:
    name = function_of(address)
    c, b = by_function.get(name, (0, 0))
    by_function[name] = (c + calls, b + size)
total_calls = sum(c for c, _ in by_function.values())
total_bytes = sum(b for _, b in by_function.values())
print(f'{total_calls:,} calls, {total_bytes:,} bytes copied through memcpy/memmove')
print(f'{"calls":>12} {"bytes":>15} {"mean":>8}  function')
for name, (calls, size) in sorted(by_function.items(), key=lambda kv: -kv[1][0])[:top]:
    print(f'{calls:>12,} {size:>15,} {size / max(calls, 1):8.1f}  {name}')
