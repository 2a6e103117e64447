"""Recorded outputs end to end: `ulpgauge inputs` -> the Python recorder -> `check
--inputs/--outputs`, against a library check of the same kernel compiled as C and against an
independent mpmath measurement of a real inference runtime's outputs.

Run from the repository root (tests/run.sh does):
    python3 tests/recorder/test_recorder.py --ulpgauge target/release/ulpgauge

Parts:
1. The numpy path: exhaustive binary16 and a sharded binary32 range, recorded with the
   recorder from a numpy kernel, equal to the library check of kernels.c (same arithmetic).
2. onnxruntime (if it is installed): the CPU kernels of Sigmoid, Tanh, Elu (alpha 1), Gelu
   (erf form) and Softplus over all 65,536 binary16 inputs, recorded by plain onnxruntime calls
   in this script (not through the recorder), measured by ulpgauge and by mpmath_accuracy.py:
   max ulp equal to 1e-3 relative, the same worst input.  The recorder's onnx adapter must
   record the same outputs.
3. The inputs files: every dtype and order the check accepts (numpy and ml_dtypes writers),
   and bad files refused with exit status 2, one line on stderr and no report.
"""

import argparse
import json
import os
import subprocess
import sys
import tempfile

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "recorder"))
sys.path.insert(0, HERE)

import mpmath_accuracy  # noqa: E402
import ulpgauge_record  # noqa: E402

FAILURES = []


def expect(ok, what):
    print(("ok      " if ok else "FAILED  ") + what)
    if not ok:
        FAILURES.append(what)


def run(ulpgauge, *args, code=None):
    r = subprocess.run([ulpgauge, *map(str, args)], capture_output=True, text=True)
    if code is not None and r.returncode != code:
        raise SystemExit(f"ulpgauge {' '.join(map(str, args))}: exit {r.returncode}\n{r.stderr}")
    return r


def pade_tanh(x):
    """kernels.c's arithmetic in numpy binary32 (each operation correctly rounded, as in C)."""
    with np.errstate(all="ignore"):
        x32 = np.asarray(x, dtype=np.float32)
        x2 = x32 * x32
        t = x32 * (np.float32(27) + x2) / (np.float32(27) + np.float32(9) * x2)
        t = np.where(t > 1, np.float32(1), np.where(t < -1, np.float32(-1), t)).astype(np.float32)
    return t.astype(x.dtype)


# The sections of a report that depend on the kernel's outputs alone.
COMPARED = ["accuracy", "non_finite", "special_values", "thresholds", "kinks", "shape",
            "reference_failures"]


def differing(a, b, keys):
    return [k for k in keys if a.get(k) != b.get(k)]


def numpy_round_trip(ulpgauge, tmp):
    lib = os.path.join(tmp, "pade.so")
    subprocess.run(["gcc", "-O2", "-ffp-contract=off", "-shared", "-fPIC", "-o", lib,
                    os.path.join(HERE, "kernels.c")], check=True)

    # Exhaustive binary16.
    x, y = os.path.join(tmp, "x16.npy"), os.path.join(tmp, "y16.npy")
    run(ulpgauge, "inputs", "--format", "f16", "--sweep", "exhaustive", "--out", x, "--quiet", code=0)
    xs = np.load(x)
    # Every binary16 pattern once, in bit order (IEEE 754-2019: 2^16 encodings).
    expect(xs.dtype == np.float16 and (xs.view(np.uint16) == np.arange(65536)).all(),
           "inputs --format f16 --sweep exhaustive writes all 65,536 patterns in bit order as float16")
    command = ulpgauge_record.record(pade_tanh, x, y, function="tanh", quiet=True)
    expect(command.startswith("ulpgauge check --inputs") and "--format f16" in command,
           "the recorder prints the check command")
    run(ulpgauge, "check", "--inputs", x, "--outputs", y, "--function", "tanh", "--format", "f16",
        "--json", os.path.join(tmp, "r16.json"), "--quiet")
    rec = json.load(open(os.path.join(tmp, "r16.json")))
    run(ulpgauge, "check", "--lib", lib, "--symbol", "lumen_pade_tanh_f16", "--function", "tanh",
        "--format", "f16", "--sweep", "exhaustive", "--json", os.path.join(tmp, "l16.json"), "--quiet")
    libr = json.load(open(os.path.join(tmp, "l16.json")))
    diff = differing(rec, libr, COMPARED)
    expect(not diff, f"f16 exhaustive: recorded check equals the library check (differ: {diff})")
    expect(rec["accuracy"]["coverage"] == "exhaustive" and rec["sweep"]["inputs"] == 65536,
           "f16 exhaustive: coverage exhaustive over 65,536 inputs")
    not_run = [n["measure"] for n in rec["recorded"]["not_run"]]
    expect("hygiene" in not_run and "throughput" in not_run and rec["hygiene"] == [],
           "hygiene and throughput are named as not run")
    print(f"        pade tanh f16: max {rec['accuracy']['max_ulp']:.4f} ulp at {rec['accuracy']['worst']['input']['bits']}")

    # Sharded binary32 over [1, 2): four parts recorded separately, checked, merged.
    parts = []
    for i in range(1, 5):
        xi, yi, ri = (os.path.join(tmp, f"{n}{i}.npy") for n in ("x32_", "y32_", "r32_"))
        run(ulpgauge, "inputs", "--format", "f32", "--sweep", "exhaustive", "--range", "1,2",
            "--shard", f"{i}/4", "--out", xi, "--quiet", code=0)
        ulpgauge_record.record(pade_tanh, xi, yi, function="tanh", shard=f"{i}/4", quiet=True)
        rj = ri.replace(".npy", ".json")
        run(ulpgauge, "check", "--inputs", xi, "--outputs", yi, "--function", "tanh", "--format", "f32",
            "--range", "1,2", "--shard", f"{i}/4", "--json", rj, "--quiet")
        parts.append(rj)
    sizes = [np.load(os.path.join(tmp, f"x32_{i}.npy"), mmap_mode="r").shape[0] for i in range(1, 5)]
    # binary32 has 2^23 patterns in [1, 2) (23 trailing significand bits, IEEE 754-2019 3.6).
    expect(sum(sizes) == 1 << 23, f"f32 [1, 2) in four parts holds 2^23 inputs ({sizes})")
    merged_path = os.path.join(tmp, "merged.json")
    run(ulpgauge, "merge", *parts, "--json", merged_path, "--quiet")
    merged = json.load(open(merged_path))
    run(ulpgauge, "check", "--lib", lib, "--symbol", "lumen_pade_tanh_f32", "--function", "tanh",
        "--format", "f32", "--sweep", "exhaustive", "--range", "1,2", "--json",
        os.path.join(tmp, "l32.json"), "--quiet")
    libr = json.load(open(os.path.join(tmp, "l32.json")))
    # Special values and thresholds lie outside [1, 2): the parts hold none of their inputs.
    diff = differing(merged, libr, ["accuracy", "non_finite", "shape", "reference_failures"])
    expect(not diff, f"f32 [1, 2) in four recorded parts, merged, equals the library check (differ: {diff})")
    expect(merged["accuracy"]["coverage"] == "exhaustive" and merged["sweep"]["inputs"] == 1 << 23,
           "merged recorded parts are exhaustive over [1, 2)")
    print(f"        pade tanh f32 [1,2): max {merged['accuracy']['max_ulp']:.4f} ulp at {merged['accuracy']['worst']['input']['bits']}")


def gradients(ulpgauge, tmp):
    """record_gradient and write_grads: dx = g*s(x)(1 - s(x)) in binary32, rounded once."""
    x = os.path.join(tmp, "gx.npy")
    run(ulpgauge, "inputs", "--format", "f16", "--sweep", "exhaustive", "--out", x, "--quiet", code=0)
    g, g2, dx = (os.path.join(tmp, n) for n in ("g.npy", "g2.npy", "dx.npy"))
    ulpgauge_record.write_grads(x, g, seed=5)
    ulpgauge_record.write_grads(x, g2, seed=6)
    gv = np.load(g).astype(np.float64)
    # g = +-(1 + k/8)·2^e, e in {-1, 0}: in +-[1/2, 2), multiples of 1/16, exact in every format.
    expect(((np.abs(gv) >= 0.5) & (np.abs(gv) < 2)).all() and (gv * 16 == np.round(gv * 16)).all(),
           "write_grads writes g in +-[1/2, 2), exact in binary16")

    def kernel(x, g):
        with np.errstate(all="ignore"):
            s = 1 / (1 + np.exp(-x.astype(np.float64)))
            return (g.astype(np.float64) * s * (1 - s)).astype(np.float16)

    ulpgauge_record.record_gradient(kernel, x, g, dx, function="sigmoid", quiet=True)
    reports = []
    for grads in (g, g2):
        out = os.path.join(tmp, "grad.json")
        run(ulpgauge, "check", "--inputs", x, "--outputs", dx, "--grads", grads, "--function", "sigmoid",
            "--format", "f16", "--role", "gradient", "--json", out, "--quiet")
        reports.append(json.load(open(out))["accuracy"])
    # Computed in binary64 and rounded once: within half an ulp plus binary64's own error.
    expect(reports[0]["max_ulp"] < 0.5001 and reports[0]["coverage"] == "exhaustive",
           f"gradient with its recorded g: max {reports[0]['max_ulp']:.4f} ulp, exhaustive")
    expect(reports[1]["correctly_rounded"] < 0.5,
           "the same dx against other g is wrong: the check uses the recorded g")


def jax_runtime(tmp):
    try:
        import jax
    except ImportError:
        print("skipped jax (not installed)")
        return
    x = os.path.join(tmp, "jx.npy")
    np.save(x, np.arange(65536, dtype=np.uint16).view(np.float16))
    y = os.path.join(tmp, "jy.npy")
    ulpgauge_record.record(ulpgauge_record.jax_kernel(jax.nn.sigmoid), x, y, quiet=True)
    direct = np.asarray(jax.jit(jax.nn.sigmoid)(np.load(x)))
    expect((np.load(y).view(np.uint16) == direct.view(np.uint16)).all(),
           "jax adapter: the recorded outputs are jax's own")


def onnx_model(op, **attrs):
    from onnx import TensorProto, helper

    x = helper.make_tensor_value_info("x", TensorProto.FLOAT16, [None])
    y = helper.make_tensor_value_info("y", TensorProto.FLOAT16, [None])
    graph = helper.make_graph([helper.make_node(op, ["x"], ["y"], **attrs)], op, [x], [y])
    model = helper.make_model(graph, opset_imports=[helper.make_opsetid("", 20)])
    model.ir_version = 9
    return model.SerializeToString()


def onnxruntime_runtime(ulpgauge, tmp):
    try:
        import onnxruntime as ort
    except ImportError:
        print("skipped onnxruntime (not installed)")
        return
    x = np.arange(65536, dtype=np.uint16).view(np.float16)
    x_path = os.path.join(tmp, "ort_x.npy")
    np.save(x_path, x)
    for op, function, attrs in [("Sigmoid", "sigmoid", {}), ("Tanh", "tanh", {}),
                                ("Elu", "elu", {"alpha": 1.0}), ("Gelu", "gelu", {}),
                                ("Softplus", "softplus", {})]:
        model = onnx_model(op, **attrs)
        session = ort.InferenceSession(model, providers=["CPUExecutionProvider"])
        y = session.run(None, {"x": x})[0]
        y_path = os.path.join(tmp, f"ort_{function}.npy")
        np.save(y_path, y)
        again = os.path.join(tmp, f"ort_{function}_recorder.npy")
        ulpgauge_record.record(ulpgauge_record.onnx_kernel(model), x_path, again, quiet=True)
        expect((np.load(again).view(np.uint16) == y.view(np.uint16)).all(),
               f"onnxruntime {op}: the recorder's onnx adapter records the same outputs")
        report = os.path.join(tmp, f"ort_{function}.json")
        run(ulpgauge, "check", "--inputs", x_path, "--outputs", y_path, "--function", function,
            "--format", "f16", "--json", report, "--quiet")
        acc = json.load(open(report))["accuracy"]
        max_ulp, worst, points = mpmath_accuracy.measure(function, x.view(np.uint16), y.view(np.uint16))
        got_worst = int(acc["worst"]["input"]["bits"], 16)
        ok = (abs(acc["max_ulp"] - max_ulp) <= 1e-3 * max_ulp and got_worst == worst
              and acc["points"] == points)
        expect(ok, f"onnxruntime {op} f16: ulpgauge max {acc['max_ulp']:.6f} ulp at {got_worst:#06x} "
                   f"({acc['points']} points), mpmath {max_ulp:.6f} ulp at {worst:#06x} ({points} points)")


def files_and_errors(ulpgauge, tmp):
    import ml_dtypes

    x = np.arange(65536, dtype=np.uint16)
    y = pade_tanh(x.view(np.float16))
    ref = os.path.join(tmp, "ref.json")
    np.save(os.path.join(tmp, "fx.npy"), x.view(np.float16))
    np.save(os.path.join(tmp, "fy.npy"), y)
    run(ulpgauge, "check", "--inputs", os.path.join(tmp, "fx.npy"), "--outputs",
        os.path.join(tmp, "fy.npy"), "--function", "tanh", "--format", "f16", "--json", ref, "--quiet")
    base = json.load(open(ref))
    # The same set as uint16 bit patterns, big-endian float16, Fortran order, shuffled.
    perm = np.random.default_rng(3).permutation(65536)
    variants = {
        "uint16": (x, y.view(np.uint16)),
        "big-endian": (x.view(np.float16).astype(">f2"), y.astype(">f2")),
        "fortran": (np.asfortranarray(x.view(np.float16)), np.asfortranarray(y)),
        "shuffled": (x[perm].view(np.float16), y[perm]),
    }
    for name, (xv, yv) in variants.items():
        xp, yp, rp = (os.path.join(tmp, f"v_{name}.{e}") for e in ("x.npy", "y.npy", "json"))
        np.save(xp, xv)
        np.save(yp, yv)
        run(ulpgauge, "check", "--inputs", xp, "--outputs", yp, "--function", "tanh", "--format", "f16",
            "--json", rp, "--quiet")
        diff = differing(json.load(open(rp)), base, COMPARED)
        expect(not diff, f"inputs as {name}: same report (differ: {diff})")
    # bfloat16 as ml_dtypes writes it ('<V2'), against uint16 bit patterns.
    xb = x.view(ml_dtypes.bfloat16)
    with np.errstate(all="ignore"):
        yb = np.tanh(xb.astype(np.float32)).astype(ml_dtypes.bfloat16)
    for name, (xv, yv) in {"ml_dtypes": (xb, yb), "uint16": (x, yb.view(np.uint16))}.items():
        np.save(os.path.join(tmp, f"b_{name}_x.npy"), xv)
        np.save(os.path.join(tmp, f"b_{name}_y.npy"), yv)
    reports = []
    for name in ("ml_dtypes", "uint16"):
        rp = os.path.join(tmp, f"b_{name}.json")
        run(ulpgauge, "check", "--inputs", os.path.join(tmp, f"b_{name}_x.npy"), "--outputs",
            os.path.join(tmp, f"b_{name}_y.npy"), "--function", "tanh", "--format", "bf16", "--json", rp, "--quiet")
        reports.append(json.load(open(rp)))
    expect(open(os.path.join(tmp, "b_ml_dtypes_x.npy"), "rb").read(64).find(b"V2") > 0
           and not differing(reports[0], reports[1], COMPARED)
           and reports[0]["accuracy"]["coverage"] == "exhaustive",
           "bf16 as ml_dtypes bfloat16 ('<V2') and as uint16: the same exhaustive report")

    # Bad files: exit 2, one line naming the fault, no report written.
    good_x, good_y = os.path.join(tmp, "fx.npy"), os.path.join(tmp, "fy.npy")
    def save(name, array):
        path = os.path.join(tmp, name)
        np.save(path, array)
        return path
    truncated = os.path.join(tmp, "truncated.npy")
    open(truncated, "wb").write(open(good_y, "rb").read()[:-7])
    cases = {
        "lengths differ": (good_x, save("short.npy", y[:-1]), "holds 65535"),
        "wrong dtype": (good_x, save("f32.npy", y.astype(np.float32)), "needs float16"),
        "truncated": (good_x, truncated, "truncated"),
        "not .npy": (good_x, os.path.join(HERE, "kernels.c"), "not a readable .npy"),
        "2-D": (good_x, save("2d.npy", y.reshape(256, 256)), "1-D"),
        "NaN-filled inputs": (save("nanx.npy", np.full(65536, np.nan, np.float16)), good_y, "NaN"),
        "one input repeated": (save("onex.npy", np.full(65536, 1.5, np.float16)), good_y, "65536 times"),
        "NaN-filled outputs": (good_x, save("nany.npy", np.full(65536, np.nan, np.float16)), "unfilled"),
        "float64": (good_x, save("f64.npy", y.astype(np.float64)), "dtype"),
    }
    for name, (xp, yp, words) in cases.items():
        out = os.path.join(tmp, "bad.json")
        if os.path.exists(out):
            os.remove(out)
        r = run(ulpgauge, "check", "--inputs", xp, "--outputs", yp, "--function", "tanh", "--format", "f16",
                "--json", out, "--quiet")
        line = r.stderr.strip()
        expect(r.returncode == 2 and "\n" not in line and words in line and not os.path.exists(out)
               and "panicked" not in r.stderr,
               f"{name}: exit 2, one line, no report ({line})")


def main():
    p = argparse.ArgumentParser()
    p.add_argument("--ulpgauge", default="target/release/ulpgauge")
    args = p.parse_args()
    ulpgauge = os.path.abspath(args.ulpgauge)
    with tempfile.TemporaryDirectory(prefix="ulpgauge-recorder-") as tmp:
        numpy_round_trip(ulpgauge, tmp)
        files_and_errors(ulpgauge, tmp)
        gradients(ulpgauge, tmp)
        jax_runtime(tmp)
        onnxruntime_runtime(ulpgauge, tmp)
    if FAILURES:
        print(f"{len(FAILURES)} failure(s)")
        return 1
    print("all recorder checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
