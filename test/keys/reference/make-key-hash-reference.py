# Reference values for test/keys/key-hash.test.ts, pasted there by hand; tests never run this.
#   python3 -m venv /tmp/venv && /tmp/venv/bin/pip install mmh3==5.3.1
#   /tmp/venv/bin/python test/keys/reference/make-key-hash-reference.py
# fmix32 is MurmurHash3_x86_32 of no bytes with the value as seed (mmh3, PyPI); the
# hash's per-code-unit Murmur state is mmh3's over the units as little-endian 32-bit blocks,
# its length mix undone (fmix32 inverted) and redone with the unit count. FNV-1a is written
# out from its published definition and checked against the FNV authors' published vectors
# (from memory).
import struct, mmh3
M = 2**32
def fmix(x): return mmh3.hash(b'', x, signed=False)  # MurmurHash3_x86_32 of no bytes = fmix32(seed)
def unfmix(h):
    h ^= h >> 16
    h = (h * pow(0xc2b2ae35, -1, M)) % M
    h ^= (h >> 13) ^ (h >> 26)
    h = (h * pow(0x85ebca6b, -1, M)) % M
    h ^= h >> 16
    return h
# Published MurmurHash3_x86_32 vectors of no bytes: seed 1 -> 0x514e28b7, seed 0xffffffff -> 0x81f16f39.
assert fmix(1) == 0x514e28b7 and fmix(0xffffffff) == 0x81f16f39
for x in (0, 1, 0x9747b28c, 0xdeadbeef, 0xffffffff): assert unfmix(fmix(x)) == x
def fnv1a(data):
    h = 0x811c9dc5
    for b in data: h = ((h ^ b) * 0x01000193) % M
    return h
assert fnv1a(b'') == 0x811c9dc5 and fnv1a(b'a') == 0xe40c292c and fnv1a(b'foobar') == 0xbf9cf968
for key in ['', 'a', 'foobar', 'perf-1', 'seat-17', 'é']:
    units = [ord(c) for c in key]
    assert all(u < 256 for u in units)
    n = len(units)
    first = fmix(fnv1a(bytes(units)) ^ n)
    blocks = b''.join(struct.pack('<I', u) for u in units)
    whole = mmh3.hash(blocks, 0x9747b28c, signed=False)
    second = fmix(unfmix(whole) ^ (4 * n) ^ n)
    print(repr(key), hex(first), hex(second), first * 2**21 + (second >> 11))
