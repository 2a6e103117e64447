"""Record a kernel's outputs over an ulpgauge inputs file, for `ulpgauge check --inputs/--outputs`.

Pure Python on numpy; the framework adapters import their framework only when used.

    import numpy as np
    from ulpgauge_record import record
    record(np.tanh, "x.npy", "y.npy", function="tanh")   # prints the ulpgauge check command

`record` reads the inputs file in batches (never whole, so a 16 GiB binary32 file is fine),
calls the kernel on each batch and writes the outputs file in the format's own dtype: float32
for f32, float16 for f16, uint16 bit patterns for bf16 (numpy has no bfloat16 dtype). The
kernel receives a numpy array in the format (ml_dtypes.bfloat16 for bf16) unless an adapter
converts it: `onnx_kernel` (an onnxruntime session of a single-input model), `torch_kernel`
and `torch_gradient` (a torch function on any device), `jax_kernel` (a JAX function on any
device). A kernel must return values in the format itself: a float32 result for float16
inputs is refused unless `cast=True` asks for round-to-nearest here.

Gradient roles: `record_gradient(kernel, "x.npy", "g.npy", "dx.npy")` calls kernel(x, g);
`write_grads` makes a g file (seeded values in +-[1/2, 2)).
"""

import os
import shlex
import sys

import numpy as np

__all__ = [
    "FORMATS",
    "record",
    "record_gradient",
    "read_inputs",
    "write_grads",
    "onnx_kernel",
    "torch_kernel",
    "torch_gradient",
    "jax_kernel",
    "check_command",
]

# Format name -> (bit-pattern dtype, dtype the outputs file is written in).
FORMATS = {
    "f32": (np.dtype("<u4"), np.dtype("<f4")),
    "f16": (np.dtype("<u2"), np.dtype("<f2")),
    "bf16": (np.dtype("<u2"), np.dtype("<u2")),
}

BATCH = 1 << 20


def _bfloat16():
    try:
        import ml_dtypes
    except ImportError:  # pragma: no cover - depends on the environment
        raise RuntimeError(
            "bf16 values need the ml_dtypes package (pip install ml_dtypes), or use the torch/jax adapters"
        )
    return np.dtype(ml_dtypes.bfloat16)


def _as_bits(array, fmt, what):
    """The bit patterns of a recorded array (any dtype ulpgauge accepts for the format)."""
    bits_dtype = FORMATS[fmt][0].newbyteorder("=")
    dt = array.dtype
    is_bf16 = dt.kind == "V" or dt.name == "bfloat16"
    if dt.itemsize != bits_dtype.itemsize or dt.kind not in "fuV":
        raise ValueError(f"{what}: dtype {dt} does not hold {fmt} values")
    if (fmt == "bf16" and dt.kind == "f") or (fmt != "bf16" and is_bf16):
        raise ValueError(f"{what}: dtype {dt} does not hold {fmt} values")
    if dt.byteorder == ">":
        array = array.astype(dt.newbyteorder("="))
    return array.view(bits_dtype)


def _values(bits, fmt):
    """Bit patterns -> a numpy array in the format (ml_dtypes.bfloat16 for bf16)."""
    if fmt == "f32":
        return bits.view(np.float32)
    if fmt == "f16":
        return bits.view(np.float16)
    return bits.view(_bfloat16())


def _output_bits(y, fmt, n, cast):
    """A kernel's result -> bit patterns of the format, refusing silent conversions."""
    y = np.asarray(y)
    if y.shape != (n,):
        y = y.reshape(-1)
        if y.shape != (n,):
            raise ValueError(f"the kernel returned {y.size} values for {n} inputs")
    want = {"f32": np.dtype(np.float32), "f16": np.dtype(np.float16)}.get(fmt)
    if fmt == "bf16":
        if y.dtype.name == "bfloat16":
            return y.view(np.uint16)
        if y.dtype == np.uint16:
            return y
        if not cast:
            raise TypeError(f"the kernel returned {y.dtype} for bf16 inputs (pass cast=True to round here)")
        return np.asarray(y, dtype=np.float32).astype(_bfloat16()).view(np.uint16)
    if y.dtype != want:
        if not cast:
            raise TypeError(f"the kernel returned {y.dtype} for {fmt} inputs (pass cast=True to round here)")
        y = y.astype(want)
    return y.view(np.uint32 if fmt == "f32" else np.uint16)


class _Reader:
    """A 1-D .npy array read batch by batch (never mapped or loaded whole, so memory stays
    one batch whatever the file's size)."""

    def __init__(self, path):
        self.path = path
        self.file = open(path, "rb")
        fmt = np.lib.format
        version = fmt.read_magic(self.file)
        if version == (1, 0):
            shape, _, dtype = fmt.read_array_header_1_0(self.file)
        elif version == (2, 0):
            shape, _, dtype = fmt.read_array_header_2_0(self.file)
        else:
            raise ValueError(f"{path}: .npy version {version} is not supported")
        if len(shape) != 1:
            raise ValueError(f"{path}: expected a 1-D array, got shape {shape}")
        if dtype.hasobject:
            raise ValueError(f"{path}: holds Python objects, not numbers")
        # One dimension: C and Fortran order lay the elements out alike.
        self.dtype, self.len, self.offset = dtype, shape[0], self.file.tell()

    def read(self, a, b):
        self.file.seek(self.offset + a * self.dtype.itemsize)
        out = np.fromfile(self.file, dtype=self.dtype, count=b - a)
        if out.shape[0] != b - a:
            raise ValueError(f"{self.path}: truncated")
        return out

    def close(self):
        self.file.close()


class _Writer:
    """A 1-D .npy array written batch by batch to a temporary file, renamed when complete."""

    def __init__(self, path, fmt, n):
        self.path, self.n, self.written = path, n, 0
        self.dtype = FORMATS[fmt][1]
        folder, name = os.path.split(os.path.abspath(path))
        self.tmp = os.path.join(folder, ".%s.%d.tmp" % (name, os.getpid()))
        self.file = open(self.tmp, "wb")
        header = {"descr": np.lib.format.dtype_to_descr(self.dtype), "fortran_order": False, "shape": (n,)}
        np.lib.format.write_array_header_1_0(self.file, header)

    def write(self, bits):
        """Appends bit patterns of the format (written in the file's dtype)."""
        np.ascontiguousarray(bits).astype(FORMATS_BITS_LE[self.dtype.itemsize]).tofile(self.file)
        self.written += bits.shape[0]

    def close(self):
        self.file.close()
        if self.written != self.n:
            os.remove(self.tmp)
            raise ValueError(f"{self.path}: {self.written} values written for {self.n} inputs")
        os.replace(self.tmp, self.path)

    def abort(self):
        self.file.close()
        if os.path.exists(self.tmp):
            os.remove(self.tmp)


FORMATS_BITS_LE = {2: np.dtype("<u2"), 4: np.dtype("<u4")}


def read_inputs(path, fmt):
    """The whole inputs file as bit patterns of the format (for small files; `record` reads
    in batches)."""
    if fmt not in FORMATS:
        raise ValueError(f"unknown format {fmt!r} (known: {', '.join(FORMATS)})")
    reader = _Reader(path)
    try:
        return _as_bits(reader.read(0, reader.len), fmt, path)
    finally:
        reader.close()


def _batches(n, batch):
    for start in range(0, n, batch):
        yield start, min(n, start + batch)


def _evaluate(paths, outputs, fmt, batch, call):
    """Reads the arrays of `paths` batch by batch and writes call(fmt, n, values...), bit
    patterns of the format, to `outputs`; returns the format."""
    readers = [_Reader(p) for p in paths]
    try:
        fmt = fmt or _guess(readers[0].dtype)
        if fmt not in FORMATS:
            raise ValueError(f"unknown format {fmt!r} (known: {', '.join(FORMATS)})")
        n = readers[0].len
        for r in readers[1:]:
            if r.len != n:
                raise ValueError(f"{r.path} holds {r.len} values for {n} inputs")
        writer = _Writer(outputs, fmt, n)
        try:
            for a, b in _batches(n, batch):
                values = [_values(_as_bits(r.read(a, b), fmt, r.path), fmt) for r in readers]
                writer.write(call(fmt, b - a, *values))
        except BaseException:
            writer.abort()
            raise
        writer.close()
        return fmt
    finally:
        for r in readers:
            r.close()


def check_command(inputs, outputs, function=None, fmt="f32", role="forward", grads=None, shard=None, extra=()):
    """The `ulpgauge check` command line for a recorded set."""
    args = ["ulpgauge", "check", "--inputs", inputs, "--outputs", outputs,
            "--function", function or "FUNC", "--format", fmt]
    if role != "forward":
        args += ["--role", role]
    if grads:
        args += ["--grads", grads]
    if shard:
        args += ["--shard", shard]
    args += list(extra)
    return " ".join(shlex.quote(str(a)) for a in args)


def record(kernel, inputs, outputs, fmt=None, function=None, batch=BATCH, cast=False, shard=None, quiet=False):
    """Calls `kernel` on every input of `inputs` (batch by batch) and writes `outputs`.

    fmt: "f32", "f16" or "bf16"; taken from the inputs' dtype when None (uint16 bit patterns
    need it said). Returns the `ulpgauge check` command, also printed unless quiet.
    """
    fmt = _evaluate([inputs], outputs, fmt, batch, lambda f, n, x: _output_bits(kernel(x), f, n, cast))
    command = check_command(inputs, outputs, function, fmt, shard=shard)
    if not quiet:
        print(command)
    return command


def write_grads(inputs, grads, fmt=None, seed=1):
    """Writes a g file for `inputs`: seeded values +-(1 + k/8)*2^e, e in {-1, 0}: in
    +-[1/2, 2) and exact in every format."""
    rng = np.random.default_rng(seed)

    def make(f, n, x):
        g = (1 + rng.integers(0, 8, n) / 8) * np.where(rng.integers(0, 2, n) == 1, 0.5, 1.0)
        g = g * np.where(rng.integers(0, 2, n) == 1, -1.0, 1.0)
        return _output_bits(g.astype(np.float32), f, n, True)

    _evaluate([inputs], grads, fmt, BATCH, make)


def record_gradient(kernel, inputs, grads, outputs, fmt=None, function=None, batch=BATCH, cast=False, quiet=False):
    """Calls `kernel(x, g)` (the gradient dx = g * f'(x)) over the inputs and g files."""
    fmt = _evaluate([inputs, grads], outputs, fmt, batch,
                    lambda f, n, x, g: _output_bits(kernel(x, g), f, n, cast))
    command = check_command(inputs, outputs, function, fmt, role="gradient", grads=grads)
    if not quiet:
        print(command)
    return command


def _guess(dt):
    """The format of an inputs dtype; uint16 bit patterns could be either 16-bit format."""
    if dt.kind == "V" or dt.name == "bfloat16":
        return "bf16"
    if dt.itemsize == 4:
        return "f32"
    if dt.kind == "f":
        return "f16"
    raise ValueError("uint16 inputs may be f16 or bf16 bit patterns: pass fmt='f16' or fmt='bf16'")


# ---- framework adapters -------------------------------------------------------------------


def onnx_kernel(model, providers=None, input_name=None):
    """A kernel from an onnxruntime session of a single-input, single-output model (a path,
    serialized bytes or an onnx ModelProto); the model's input must be in the format's type."""
    import onnxruntime as ort

    if hasattr(model, "SerializeToString"):
        model = model.SerializeToString()
    session = ort.InferenceSession(model, providers=providers or ["CPUExecutionProvider"])
    name = input_name or session.get_inputs()[0].name

    def run(x):
        if x.dtype.name == "bfloat16":
            raise TypeError("onnxruntime's numpy interface has no bfloat16; record bf16 with torch or jax")
        return session.run(None, {name: np.ascontiguousarray(x)})[0]

    return run


def _to_torch(torch, x, device):
    if x.dtype.name == "bfloat16":
        t = torch.from_numpy(np.ascontiguousarray(x.view(np.uint16)).view(np.int16)).view(torch.bfloat16)
    else:
        t = torch.from_numpy(np.ascontiguousarray(x))
    return t.to(device)


def _from_torch(torch, t):
    t = t.detach().to("cpu")
    if t.dtype == torch.bfloat16:
        return t.view(torch.int16).numpy().view(np.uint16)
    return t.numpy()


def torch_kernel(fn, device="cpu"):
    """A kernel from a torch function (e.g. torch.sigmoid) run on `device` ("cpu", "cuda", ...)."""
    import torch

    def run(x):
        with torch.no_grad():
            return _from_torch(torch, fn(_to_torch(torch, x, device)))

    return run


def torch_gradient(fn, device="cpu"):
    """A gradient kernel dx = g * f'(x) from torch autograd of `fn` on `device`."""
    import torch

    def run(x, g):
        tx = _to_torch(torch, x, device).requires_grad_(True)
        y = fn(tx)
        y.backward(_to_torch(torch, g, device))
        return _from_torch(torch, tx.grad)

    return run


def jax_kernel(fn, device=None):
    """A kernel from a JAX function (e.g. jax.nn.sigmoid), jitted, on `device` if given."""
    import jax

    jitted = jax.jit(fn)

    def run(x):
        arr = jax.device_put(x, device) if device is not None else x
        return np.asarray(jitted(arr))

    return run


def _main(argv):
    import argparse

    p = argparse.ArgumentParser(description="Record a numpy or onnx kernel over an ulpgauge inputs file.")
    p.add_argument("--inputs", required=True)
    p.add_argument("--outputs", required=True)
    p.add_argument("--format", choices=sorted(FORMATS), default=None)
    p.add_argument("--function", default=None, help="catalog function, for the printed command")
    what = p.add_mutually_exclusive_group(required=True)
    what.add_argument("--numpy", metavar="UFUNC", help="a numpy function name, e.g. tanh")
    what.add_argument("--onnx", metavar="MODEL.onnx", help="a single-input onnx model")
    p.add_argument("--cast", action="store_true", help="round results of another dtype to the format")
    a = p.parse_args(argv)
    kernel = getattr(np, a.numpy) if a.numpy else onnx_kernel(a.onnx)
    record(kernel, a.inputs, a.outputs, fmt=a.format, function=a.function, cast=a.cast)
    return 0


if __name__ == "__main__":
    sys.exit(_main(sys.argv[1:]))
