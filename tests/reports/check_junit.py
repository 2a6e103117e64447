#!/usr/bin/env python3
"""Reads ulpgauge's JUnit XML with two independent readers (the standard library's XML parser
and the junitparser package from PyPI) and checks its counts against the JSON report.

The layout checked is the commonly used Jenkins/Ant one (from memory of its schema):
<testsuites> holds <testsuite>s with name, tests, failures, errors, time, timestamp
(YYYY-MM-DDThh:mm:ss) and hostname; each holds <testcase>s with name, classname and time,
which hold at most one <failure>, <error> or <skipped> with a message; the counts on a suite
equal its cases'.

usage: check_junit.py KIND:FILE.xml:REPORT.json ...   (KIND: check, certify, compare, matrix)
"""
import json
import re
import sys
import xml.etree.ElementTree as ET

import junitparser  # PyPI


def expected_check(report):
    kernels = report["kernels"] if "kernels" in report else [report]
    tests = failures = errors = 0
    for k in kernels:
        if k.get("kind") == "pair-check":
            # One case per pair check: its verdict.
            code = k["verdict"]["exit_code"]
            tests += 1
            failures += int(code == 1)
            errors += int(code == 3)
            continue
        tests += len(k["special_values"]) + len(k["hygiene"]) + 4
        failures += sum(not s["passed"] for s in k["special_values"])
        failures += sum(not h["passed"] for h in k["hygiene"])
        limit = k["verdict"]["max_ulp_limit"]
        failures += int(limit is not None and k["accuracy"]["max_ulp"] > limit)
        failures += int(bool(k["provenance"]["reference_check"]["disagreements"]))
        # Non-finite runs fail unless the check allowed them (verdict.non_finite_allowed).
        failures += int(k["non_finite_total"]["runs"] > 0 and not k["verdict"]["non_finite_allowed"])
        errors += int(k["crash"] is not None)
    return tests, failures, errors, len(kernels)


def expected(kind, report):
    if kind == "check":
        return expected_check(report)
    if kind == "certify":
        reqs = report["requirements"]
        return len(reqs) + int(report["crash"] is not None), sum(not r["passed"] for r in reqs), \
            int(report["crash"] is not None), 1
    if kind == "compare":
        rows = [r for k in report["kernels"] for r in k["rows"] if r["change"] != "not-judged"]
        tests = len(rows) + len(report["missing"])
        fails = sum(r["change"] == "worse" for r in rows) + len(report["missing"])
        return tests, fails, 0, len(report["kernels"]) + int(bool(report["missing"]))
    if kind == "matrix":
        tests = len(report["builds"]) * len(report["kernels"])
        fails = errors = 0
        for b in report["builds"]:
            for k in report["kernels"]:
                if b["status"] == "failed":
                    errors += 1
                    continue
                if b["status"] != "built":
                    continue
                cell = next((c for c in report["cells"] if c["kernel"] == k and c["build"] == b["label"]), None)
                if cell is None or cell["error"] or cell["crash"]:
                    errors += 1
                elif cell["failed"]:
                    fails += 1
        return tests, fails, errors, len(report["builds"])
    raise SystemExit(f"unknown kind {kind}")


def layout(path, root, problems):
    stamp = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d$")
    if root.tag != "testsuites":
        problems.append(f"{path}: root is <{root.tag}>")
    for suite in root:
        if suite.tag != "testsuite":
            problems.append(f"{path}: <{suite.tag}> inside <testsuites>")
            continue
        for a in ["name", "tests", "failures", "errors", "time", "timestamp", "hostname"]:
            if not suite.get(a):
                problems.append(f"{path}: a testsuite lacks {a}")
        if not stamp.match(suite.get("timestamp", "")):
            problems.append(f"{path}: timestamp {suite.get('timestamp')!r}")
        cases = [c for c in suite if c.tag == "testcase"]
        others = [c.tag for c in suite if c.tag not in ("testcase", "properties", "system-out", "system-err")]
        if others:
            problems.append(f"{path}: unexpected {others} in a testsuite")
        counted = {"failure": 0, "error": 0, "skipped": 0}
        for c in cases:
            for a in ["name", "classname", "time"]:
                if c.get(a) is None:
                    problems.append(f"{path}: a testcase lacks {a}")
            kids = [k.tag for k in c]
            if len(kids) > 1 or any(k not in counted for k in kids):
                problems.append(f"{path}: testcase children {kids}")
            for k in c:
                counted[k.tag] += 1
                if k.tag != "skipped" and not k.get("message"):
                    problems.append(f"{path}: a {k.tag} without a message")
                if re.fullmatch(r"[^ ]+ at 0x[0-9a-f]+", k.get("message", "")):
                    problems.append(f"{path}: bare rule and bit pattern: {k.get('message')}")
        if int(suite.get("tests")) != len(cases) or int(suite.get("failures")) != counted["failure"] \
                or int(suite.get("errors")) != counted["error"]:
            problems.append(f"{path}: suite {suite.get('name')} counts disagree with its cases")


def main():
    problems = []
    for spec in sys.argv[1:]:
        kind, path, data = spec.split(":", 2)
        report = json.load(open(data))
        root = ET.parse(path).getroot()
        layout(path, root, problems)
        tests, failures, errors, suites = expected(kind, report)
        got = (sum(int(s.get("tests")) for s in root), sum(int(s.get("failures")) for s in root),
               sum(int(s.get("errors")) for s in root), len(root))
        if got != (tests, failures, errors, suites):
            problems.append(f"{path}: (tests, failures, errors, suites) = {got}, report says {(tests, failures, errors, suites)}")
        # An independent reader agrees.
        xml = junitparser.JUnitXml.fromfile(path)
        jp_tests = sum(s.tests for s in xml)
        jp_fail = sum(s.failures for s in xml)
        cases_failed = sum(1 for s in xml for c in s if any(isinstance(r, junitparser.Failure) for r in c.result))
        if (jp_tests, jp_fail, cases_failed) != (tests, failures, failures):
            problems.append(f"{path}: junitparser reads {jp_tests} tests, {jp_fail} failures ({cases_failed} failed cases)")
        if kind == "check":
            kernels = report["kernels"] if "kernels" in report else [report]
            messages = {f.get("message") for f in root.iter("failure")}
            for k in kernels:
                if k.get("kind") == "pair-check":
                    if k["verdict"]["exit_code"] == 1 and "; ".join(k["verdict"]["reasons"]) not in messages:
                        problems.append(f"{path}: pair check {k['symbol']}: its reasons are not a failure message")
                    continue
                for line in k["verdict"]["failed"]:
                    if "disagrees with MPFR" not in line and line not in messages:
                        problems.append(f"{path}: failed line not a failure message: {line}")
        print(f"check_junit: {path}: {tests} tests, {failures} failures, {errors} errors")
    for p in problems:
        print("FAIL", p)
    sys.exit(1 if problems else 0)


if __name__ == "__main__":
    main()
