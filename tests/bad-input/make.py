"""Writes the bad-input catalogue's binary fixtures (tests/bad-input/<case>/*.npy|*.npz).

Python's standard library only (struct, zlib, zipfile), so the bytes do not depend on a numpy
version; the .npy header is laid out as numpy's format 1.0 writes it (magic, version, header
length, dict padded with spaces to a multiple of 64 bytes, ending in a newline). The text
fixtures and every case.json are written by hand. Run from the repository root:
    python3 tests/bad-input/make.py
"""

import os
import struct
import zipfile
import zlib

ROOT = os.path.dirname(os.path.abspath(__file__))


def header(descr, shape, fortran=False):
    dims = ", ".join(str(d) for d in shape) + ("," if len(shape) == 1 else "")
    text = "{'descr': '%s', 'fortran_order': %s, 'shape': (%s), }" % (
        descr,
        "True" if fortran else "False",
        dims,
    )
    pad = 64 - (10 + len(text) + 1) % 64
    text = text + " " * (pad % 64) + "\n"
    return b"\x93NUMPY\x01\x00" + struct.pack("<H", len(text)) + text.encode("latin1")


def f32(shape, values, descr="<f4"):
    fmt = ("<" if descr[0] == "<" else ">") + "f" * len(values)
    return header(descr, shape) + struct.pack(fmt, *values)


def base_logits(rows=4):
    # The same values as tests/cli/harness.rs `logits`: ((i * 7) % 5) - 2.
    return f32((rows, 3), [float((i * 7) % 5 - 2) for i in range(rows * 3)])


def write(case, name, data):
    os.makedirs(os.path.join(ROOT, case), exist_ok=True)
    with open(os.path.join(ROOT, case, name), "wb") as f:
        f.write(data)


def npz(members, compress=True):
    """A bundle as np.savez(_compressed) writes it, with a fixed timestamp."""
    import io

    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        for name, data in members:
            info = zipfile.ZipInfo(name + ".npy", date_time=(1980, 1, 1, 0, 0, 0))
            info.compress_type = zipfile.ZIP_DEFLATED if compress else zipfile.ZIP_STORED
            z.writestr(info, data)
    return bytearray(buf.getvalue())


def central(b):
    """Offsets of each central directory entry."""
    out, i = [], 0
    while True:
        i = b.find(b"PK\x01\x02", i)
        if i < 0:
            return out
        out.append(i)
        i += 4


def main():
    write("base", "l.npy", base_logits())

    nan = [0.5] * 12
    nan[4] = float("nan")
    nan[8] = float("-inf")
    write("npy-nan-and-inf", "l.npy", f32((4, 3), nan))
    write("npy-int-dtype", "l.npy", header("<i8", (4, 3)) + bytes(96))
    write("npy-complex-dtype", "l.npy", header("<c8", (4, 3)) + bytes(96))
    write("npy-wrong-columns", "l.npy", f32((4, 2), [0.0] * 8))
    write("npy-three-dims", "l.npy", f32((4, 3, 2), [0.0] * 24))
    full = base_logits()
    write("npy-truncated-body", "l.npy", full[:-5])
    write("npy-bad-header-dict", "l.npy", b"\x93NUMPY\x01\x00\x10\x00{'descr': <f4}  \n")
    write("npy-bad-magic", "l.npy", b"\x93NUMPX\x01\x00" + full[8:])
    write("npy-header-past-end", "l.npy", b"\x93NUMPY\x01\x00\xff\x00{'descr': '<f4'")
    write("npy-big-endian-nan", "l.npy", f32((4, 3), nan, descr=">f4"))

    write("objectness-out-of-range", "o.npy", f32((4,), [0.5, 1.2, -0.1, 0.3]))
    write("objectness-nan", "o.npy", f32((4,), [0.5, 0.5, float("nan"), 0.3]))
    write("objectness-wrong-length", "o.npy", f32((1,), [0.5]))

    write("labels-npy-index-out-of-range", "y.npy", header("<i8", (4,)) + struct.pack("<4q", 1, 2, 7, -1))

    logits = bytes(base_logits())
    # No `logits` member.
    write("npz-missing-logits", "b.npz", npz([("labels", header("<i8", (4,)) + struct.pack("<4q", 1, 2, -1, 0))]))
    # Cut in the middle of the central directory: the end record is gone too.
    b = npz([("logits", logits)])
    write("npz-truncated-directory", "b.npz", b[: central(b)[0] + 20])
    # Method 99 in the local and central headers.
    b = npz([("logits", logits)])
    struct.pack_into("<H", b, 8, 99)
    struct.pack_into("<H", b, central(b)[0] + 10, 99)
    write("npz-bad-compression-method", "b.npz", b)
    # The labels member declares 32 bytes uncompressed but its deflate data inflates to more.
    lab = header("<i8", (4,)) + struct.pack("<4q", 1, 2, -1, 0) + bytes(4096)
    b = npz([("logits", logits), ("labels", lab)])
    cd = central(b)[1]
    struct.pack_into("<I", b, cd + 24, 200)
    local = struct.unpack_from("<I", b, cd + 42)[0]
    struct.pack_into("<I", b, local + 22, 200)
    write("npz-member-inflates-past-size", "b.npz", b)
    # A member whose declared size disagrees with its .npy header.
    b = npz([("logits", logits[:-12])])
    write("npz-member-short-of-header", "b.npz", b)
    write("npz-not-a-zip", "b.npz", b"this is not a zip archive\n")


if __name__ == "__main__":
    main()
