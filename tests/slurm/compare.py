#!/usr/bin/env python3
"""Compares a merged report with the report of one unsharded run of the same check.

usage: compare.py UNSHARDED.json MERGED.json

Equal means every key equal except what legitimately differs between two runs of one check
(the same rule as tests/kernel_support's `comparable`): `provenance` (date, host, timings,
confirmations), `kernel.ns_per_element` (a timing) and the determinism check's `detail` (how
many rounds fitted its time budget). `accuracy`, `non_finite`, `special_values` and
`thresholds` must be present and equal. Exit status 0 when equal, 1 with the differing paths.
"""
import json
import sys

REQUIRED = ("accuracy", "non_finite", "special_values", "thresholds")


def comparable(report):
    r = dict(report)
    r.pop("provenance", None)
    if isinstance(r.get("kernel"), dict):
        r["kernel"] = {k: v for k, v in r["kernel"].items() if k != "ns_per_element"}
    if isinstance(r.get("hygiene"), list):
        r["hygiene"] = [
            {k: v for k, v in h.items() if not (h.get("check") == "determinism" and k == "detail")}
            for h in r["hygiene"]
        ]
    return r


def kernels(value):
    return value["kernels"] if "kernels" in value else [value]


def differences(a, b, path="", out=None):
    out = [] if out is None else out
    if isinstance(a, dict) and isinstance(b, dict):
        for k in sorted(set(a) | set(b)):
            if k not in a or k not in b:
                out.append(f"{path}/{k}: only in {'merged' if k in b else 'unsharded'}")
            else:
                differences(a[k], b[k], f"{path}/{k}", out)
    elif isinstance(a, list) and isinstance(b, list) and len(a) == len(b):
        for i, (x, y) in enumerate(zip(a, b)):
            differences(x, y, f"{path}[{i}]", out)
    elif a != b:
        out.append(f"{path}: unsharded {json.dumps(a)[:120]} merged {json.dumps(b)[:120]}")
    return out


def main():
    if len(sys.argv) != 3:
        sys.exit(__doc__)
    with open(sys.argv[1]) as f:
        whole = json.load(f)
    with open(sys.argv[2]) as f:
        merged = json.load(f)
    a, b = kernels(whole), kernels(merged)
    if len(a) != len(b):
        print(f"{len(a)} kernel reports unsharded, {len(b)} merged")
        return 1
    diffs = []
    for i, (x, y) in enumerate(zip(a, b)):
        for key in REQUIRED:
            if key not in x or key not in y:
                diffs.append(f"kernel {i}: no {key!r} section")
        diffs += [f"kernel {i}: {d}" for d in differences(comparable(x), comparable(y))]
    for d in diffs:
        print(d)
    if diffs:
        return 1
    print(f"identical to the unsharded run: {len(a)} kernel report(s), every key but provenance and timings")
    return 0


if __name__ == "__main__":
    sys.exit(main())
