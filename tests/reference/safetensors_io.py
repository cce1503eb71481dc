"""Read and write the safetensors container with numpy alone.

The container (a published open format): an 8-byte little-endian header length, a JSON header
mapping each tensor name to {"dtype", "shape", "data_offsets": [begin, end]} (offsets relative
to the first byte after the header) plus an optional "__metadata__" object of string values,
then the raw little-endian tensor bytes.

numpy has no bfloat16: BF16 values are kept as their u16 bit patterns and widened to f32 by a
16-bit left shift (bfloat16 is the top half of a binary32).
"""

import json
import struct

import numpy as np

# Element sizes of the dtypes this project uses.
_ELEMENT_BYTES = {"F32": 4, "F16": 2, "BF16": 2}


class SafetensorsError(Exception):
    """A malformed container; the message names the file and the tensor or offset at fault."""


def f32_to_bf16_bits(values):
    """Round binary32 values to the nearest bfloat16 (ties to even); return the u16 bit patterns."""
    bits = np.ascontiguousarray(values, dtype="<f4").view("<u4").astype(np.uint64)
    rounding = ((bits >> 16) & 1) + 0x7FFF
    return ((bits + rounding) >> 16).astype("<u2")


def bf16_bits_to_f32(bits):
    """Widen bfloat16 bit patterns to binary32 exactly."""
    return (np.asarray(bits, dtype="<u2").astype("<u4") << 16).view("<f4")


def encode(values, dtype):
    """The little-endian bytes of `values` stored as `dtype`."""
    values = np.asarray(values, dtype=np.float64)
    if dtype == "F32":
        return values.astype("<f4").tobytes()
    if dtype == "F16":
        return values.astype("<f2").tobytes()
    if dtype == "BF16":
        return f32_to_bf16_bits(values.astype("<f4")).tobytes()
    raise ValueError(f"unsupported dtype {dtype!r}")


def decode(raw, dtype, shape):
    """float64 array from the little-endian bytes of one tensor."""
    if dtype == "F32":
        flat = np.frombuffer(raw, dtype="<f4")
    elif dtype == "F16":
        flat = np.frombuffer(raw, dtype="<f2")
    elif dtype == "BF16":
        flat = bf16_bits_to_f32(np.frombuffer(raw, dtype="<u2"))
    else:
        raise ValueError(f"unsupported dtype {dtype!r}")
    return flat.astype(np.float64).reshape(shape)


def write(path, tensors, dtype, metadata):
    """Write `tensors` (name -> array) all stored as `dtype`, laid out back to back."""
    header = {"__metadata__": dict(metadata)}
    payload = bytearray()
    for name, values in tensors.items():
        raw = encode(values, dtype)
        header[name] = {
            "dtype": dtype,
            "shape": list(np.shape(values)),
            "data_offsets": [len(payload), len(payload) + len(raw)],
        }
        payload += raw
    text = json.dumps(header).encode("utf-8")
    # Pad the header with spaces so the tensor data starts 8-byte aligned, as common writers do.
    text += b" " * (-len(text) % 8)
    with open(path, "wb") as out:
        out.write(struct.pack("<Q", len(text)))
        out.write(text)
        out.write(payload)


def read(path):
    """Return (tensors as float64 arrays, metadata dict) from a safetensors file."""
    with open(path, "rb") as src:
        blob = src.read()
    if len(blob) < 8:
        raise SafetensorsError(f"{path}: {len(blob)} bytes, shorter than the 8-byte header length")
    (header_len,) = struct.unpack_from("<Q", blob, 0)
    data_start = 8 + header_len
    if data_start > len(blob):
        raise SafetensorsError(f"{path}: header length {header_len} runs past the end ({len(blob)} bytes)")
    header = json.loads(blob[8:data_start].decode("utf-8"))
    metadata = header.pop("__metadata__", {}) or {}
    tensors = {}
    for name, entry in header.items():
        dtype, shape = entry["dtype"], entry["shape"]
        begin, end = entry["data_offsets"]
        if dtype not in _ELEMENT_BYTES:
            raise SafetensorsError(f"{path}: tensor {name!r} has unsupported dtype {dtype}")
        expected = _ELEMENT_BYTES[dtype] * int(np.prod(shape, dtype=np.int64))
        if end - begin != expected or data_start + end > len(blob):
            raise SafetensorsError(
                f"{path}: tensor {name!r} data_offsets [{begin}, {end}] do not hold {dtype} {shape}"
            )
        tensors[name] = decode(blob[data_start + begin : data_start + end], dtype, shape)
    return tensors, metadata

