#!/usr/bin/env python3
"""make_seeds.py OUT - seed corpora for the libFuzzer targets (tests/fuzz/).

Made from what the repository ships: the golden vectors (vectors/*/), the
example scenarios (docs/*.ini) and SigMF metas written here by the rules of
host/sigmf.h. Each target's seeds go to OUT/<target>/, in the input layout
its fuzz_<target>.c describes (a mode octet or two, then the octets).
"""
import glob
import json
import os
import struct
import sys

ROOT = os.path.normpath(os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", ".."))
VECTORS = sorted(d for d in glob.glob(os.path.join(ROOT, "vectors", "*")) if os.path.isdir(d))
GROUND_CAP = 12 * 1024   # octets of a vector's downlink kept per seed
LINK_SAMPLES = 2 * 4096  # octets of a vector's samples sent per seed
TAPS_CAP = 20000         # images larger than this are left out (the fuzz target's max_len)


def put(out, target, name, data):
    d = os.path.join(out, target)
    os.makedirs(d, exist_ok=True)
    with open(os.path.join(d, name), "wb") as f:
        f.write(data)


def crc32c(data):
    """CRC-32C (Castagnoli, reflected 0x82F63B78), as firmware/tl_crc32c.h."""
    crc = 0xFFFFFFFF
    for b in data:
        crc ^= b
        for _ in range(8):
            crc = (crc >> 1) ^ (0x82F63B78 if crc & 1 else 0)
    return crc ^ 0xFFFFFFFF


def cobs(data):
    out, block = bytearray(), bytearray()
    for b in data:
        if b == 0:
            out += bytes([len(block) + 1]) + block
            block = bytearray()
        else:
            block.append(b)
            if len(block) == 254:
                out += bytes([255]) + block
                block = bytearray()
    out += bytes([len(block) + 1]) + block
    return bytes(out)


def link_wire(msgs):
    """Frames as tl_link_encode writes them (tl_link.h): body, CRC-32C, COBS, 0x00."""
    wire = bytearray()
    for seq, (mtype, payload) in enumerate(msgs):
        body = struct.pack(">BBHH", 1, mtype, seq & 0xFFFF, len(payload)) + payload
        wire += cobs(body + struct.pack(">I", crc32c(body))) + b"\x00"
    return bytes(wire)


def vector_messages(v):
    setup = open(os.path.join(v, "setup.bin"), "rb").read()
    taps_path = os.path.join(v, "taps.bin")
    taps = open(taps_path, "rb").read() if os.path.exists(taps_path) else b""
    if len(taps) > 60000:
        return None
    samples = open(os.path.join(v, "samples.bin"), "rb").read()[:LINK_SAMPLES]
    msgs = [(0x01, b"")]
    for off in range(0, len(taps), 4000):
        msgs.append((0x02, struct.pack(">II", off, len(taps)) + taps[off:off + 4000]))
    msgs.append((0x03, struct.pack(">I", len(taps)) + setup))
    for off in range(0, len(samples), 4096):
        msgs.append((0x04, samples[off:off + 4096]))
    msgs.append((0x05, b""))
    return msgs


def ground_seeds(out):
    lens = {1024: 0, 128: 1, 2048: 2, 256: 3, 512: 4}
    for v in VECTORS:
        name = os.path.basename(v)
        frames = open(os.path.join(v, "frames.bin"), "rb").read()
        flen = struct.unpack(">I", open(os.path.join(v, "setup.bin"), "rb").read()[152:156])[0]
        put(out, "ground", name + "-frames", bytes([lens[flen] << 1, 7]) + frames[:GROUND_CAP])
        # raw mode: the frames' data fields back to back are the packet stream
        # (ASM 4, primary header 6, data field, FECF 2: docs/icd.md)
        step = 4 + flen
        packets = b"".join(frames[i + 10:i + step - 2] for i in range(0, len(frames) - step + 1, step))
        put(out, "ground", name + "-raw", bytes([1, 3]) + packets[:GROUND_CAP])


def link_seeds(out):
    for v in VECTORS:
        name = os.path.basename(v)
        msgs = vector_messages(v)
        if msgs is None:
            continue
        listed = b"".join(struct.pack(">BH", t, len(p)) + p for t, p in msgs)
        put(out, "link", name + "-messages", b"\x00" + listed)
        put(out, "link", name + "-wire", b"\x01" + link_wire(msgs))
        put(out, "link", name + "-setup", b"\x00" + open(os.path.join(v, "setup.bin"), "rb").read())


def scenario_seeds(out):
    seen = set()
    for p in sorted(glob.glob(os.path.join(ROOT, "docs", "*.ini")) + glob.glob(os.path.join(ROOT, "vectors", "*", "scenario.ini"))):
        data = open(p, "rb").read()
        if data in seen:
            continue
        seen.add(data)
        rel = os.path.relpath(p, ROOT).replace(os.sep, "-")
        put(out, "scenario", rel, data)


def sigmf_seeds(out):
    # The harness's data file is 8192 octets (fuzz_sigmf.c DATA_BYTES).
    scen = open(os.path.join(ROOT, "docs", "scenario-nominal.ini")).read()
    ext = [{"name": "tidelock", "version": "1.0.0", "optional": True}]
    cases = {
        "ri16-2ch": ("ri16_le", 2, 2048),
        "ci16-1ch": ("ci16_le", 1, 2048),
        "ri8-2ch": ("ri8", 2, 4096),
        "rf32-1ch": ("rf32_le", 1, 2048),
    }
    for name, (dt, ch, samples) in cases.items():
        meta = {
            "global": {
                "core:datatype": dt, "core:version": "1.2.0", "core:sample_rate": 102.4e6,
                "core:num_channels": ch, "core:recorder": "tidelock", "core:description": "seed",
                "core:extensions": ext, "tidelock:samples": samples, "tidelock:adc_bits": 14,
                "tidelock:adc_full_scale_v": 0.5, "tidelock:seed": 1, "tidelock:scenario": scen,
                "tidelock:model": {"sky": {"rms_fs": 0.125}},
            },
            "captures": [{"core:sample_start": 0, "core:datetime": "2026-01-02T03:04:05.5Z",
                          "core:frequency": 25e6}],
            "annotations": [{"core:sample_start": 16, "core:sample_count": 32,
                             "core:freq_lower_edge": 1e6, "core:freq_upper_edge": 2e6}],
        }
        put(out, "sigmf", name, json.dumps(meta, indent=2).encode())
    minimal = {"global": {"core:datatype": "ri16_le", "core:version": "1.2.0"}, "captures": [], "annotations": []}
    put(out, "sigmf", "minimal", json.dumps(minimal).encode())
    put(out, "sigmf", "dataset", json.dumps(
        {"global": {"core:datatype": "ri16_le", "core:version": "1.2.0", "core:dataset": "r.sigmf-data"},
         "captures": [], "annotations": []}).encode())


def taps_seeds(out):
    seen = set()
    for v in VECTORS:
        p = os.path.join(v, "taps.bin")
        if not os.path.exists(p):
            continue
        img = open(p, "rb").read()
        if len(img) > TAPS_CAP or img in seen:
            continue
        seen.add(img)
        name = os.path.basename(v)
        put(out, "taps", name, b"\x00" + img)
        put(out, "taps", name + "-crcfix", b"\x01" + img)


def main():
    if len(sys.argv) != 2:
        sys.exit("usage: make_seeds.py OUT")
    out = sys.argv[1]
    for f in (ground_seeds, link_seeds, scenario_seeds, sigmf_seeds, taps_seeds):
        f(out)
    for t in sorted(os.listdir(out)):
        files = os.listdir(os.path.join(out, t))
        size = sum(os.path.getsize(os.path.join(out, t, f)) for f in files)
        print("fuzz seeds: %-8s %3d files, %7d octets" % (t, len(files), size))


if __name__ == "__main__":
    main()
