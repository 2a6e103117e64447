#!/usr/bin/env python3
"""Opens ulpgauge's HTML reports in headless Chromium and checks them against the JSON reports.

Driven through Chromium's remote-debugging protocol (the DevTools protocol, over the
websocket-client package). For every page: no console error, no uncaught exception, no failed
or network resource load; for check pages, every kernel of the JSON report has its section,
and the verdict, max ulp and worst input shown equal the JSON report's; moving the mouse over
the worst bucket shows its input, and clicking it pins that input. Screenshots go to OUTDIR.

usage: check_pages.py OUTDIR KIND:PAGE.html:REPORT.json ...   (KIND: check, certify, compare, matrix)
"""
import base64
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
import urllib.request

import websocket  # websocket-client (PyPI)

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--remote-debugging-port=0", "--window-size=1280,1600", "--hide-scrollbars"]


class Browser:
    def __init__(self):
        exe = shutil.which("chromium") or shutil.which("chromium-browser")
        if not exe:
            sys.exit("check_pages: chromium not found (tests/reports/run.sh installs it)")
        self.profile = tempfile.mkdtemp(prefix="ulpgauge-chromium-")
        self.proc = subprocess.Popen([exe, *FLAGS, "--user-data-dir=" + self.profile, "about:blank"],
                                     stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        port_file = os.path.join(self.profile, "DevToolsActivePort")
        for _ in range(300):
            if os.path.exists(port_file) and open(port_file).read().count("\n") >= 1:
                break
            time.sleep(0.1)
        port = open(port_file).read().split("\n")[0]
        for _ in range(100):
            pages = json.load(urllib.request.urlopen(f"http://127.0.0.1:{port}/json/list"))
            pages = [p for p in pages if p.get("type") == "page"]
            if pages:
                break
            time.sleep(0.1)
        self.ws = websocket.create_connection(pages[0]["webSocketDebuggerUrl"], timeout=60)
        self.next_id = 0
        self.events = []
        for domain in ["Page", "Runtime", "Log", "Network"]:
            self.call(domain + ".enable")

    def call(self, method, **params):
        self.next_id += 1
        mine = self.next_id
        self.ws.send(json.dumps({"id": mine, "method": method, "params": params}))
        while True:
            msg = json.loads(self.ws.recv())
            if msg.get("id") == mine:
                if "error" in msg:
                    raise RuntimeError(f"{method}: {msg['error']}")
                return msg.get("result", {})
            if "method" in msg:
                self.events.append(msg)

    def eval(self, expression):
        r = self.call("Runtime.evaluate", expression=expression, returnByValue=True, awaitPromise=True)
        if "exceptionDetails" in r:
            raise RuntimeError(f"evaluating {expression[:60]}: {r['exceptionDetails']}")
        return r["result"].get("value")

    def open(self, path):
        self.events = []
        self.call("Page.navigate", url="file://" + os.path.abspath(path))
        for _ in range(300):
            if self.eval("document.readyState") == "complete" and \
                    self.eval("document.documentElement.getAttribute('data-ready')") == "true":
                return
            time.sleep(0.1)
        raise RuntimeError(f"{path}: the page's script never finished")

    def problems(self):
        """Console errors, exceptions, failed or network loads seen since the page was opened."""
        found = []
        for e in self.events:
            m, p = e["method"], e.get("params", {})
            if m == "Runtime.exceptionThrown":
                found.append("exception: " + json.dumps(p["exceptionDetails"])[:300])
            elif m == "Runtime.consoleAPICalled" and p.get("type") in ("error", "assert", "warning"):
                found.append("console " + p["type"] + ": " + json.dumps(p.get("args"))[:300])
            elif m == "Log.entryAdded" and p["entry"].get("level") in ("error", "warning"):
                found.append("log: " + p["entry"].get("text", "")[:300])
            elif m == "Network.loadingFailed":
                found.append("failed load: " + json.dumps(p)[:300])
            elif m == "Network.requestWillBeSent":
                url = p["request"]["url"]
                if not (url.startswith("file://") or url.startswith("data:")):
                    found.append("network request: " + url)
        return found

    def mouse(self, kind, x, y):
        self.call("Input.dispatchMouseEvent", type=kind, x=x, y=y, button="left",
                  clickCount=1 if kind != "mouseMoved" else 0)

    def screenshot(self, path, full=False):
        params = {"format": "png"}
        if full:
            h = min(self.eval("document.documentElement.scrollHeight"), 9000)
            params.update(captureBeyondViewport=True,
                          clip={"x": 0, "y": 0, "width": 1280, "height": h, "scale": 1})
        data = self.call("Page.captureScreenshot", **params)["data"]
        with open(path, "wb") as f:
            f.write(base64.b64decode(data))

    def close(self):
        try:
            self.ws.close()
        finally:
            self.proc.terminate()
            self.proc.wait(timeout=20)
            shutil.rmtree(self.profile, ignore_errors=True)


def kernels_of(report):
    return report["kernels"] if "kernels" in report else [report]


def one_input(kernels):
    return [k for k in kernels if k.get("kind") != "pair-check"]


def pairs_of(kernels):
    return [k for k in kernels if k.get("kind") == "pair-check"]


def check_pairs(b, pairs, all_kernels, failures, name):
    """Pair-check sections (gated kernels) against their JSON reports."""
    sections = b.eval("""Array.from(document.querySelectorAll('section.pair-check')).map(s => {
        const svg = s.querySelector('figure.heatmap svg'); const r = svg ? svg.getBoundingClientRect() : null;
        return {symbol: s.dataset.symbol, verdict: s.querySelector('.badge.verdict').textContent,
        maxTitle: s.querySelector('.max-ulp').title, coverage: s.querySelector('.coverage').textContent,
        a: (s.querySelector('.worst-a .bits') || {}).textContent || null,
        b: (s.querySelector('.worst-b .bits') || {}).textContent || null,
        regions: s.querySelectorAll('table.regions tbody tr').length,
        cells: svg ? svg.querySelectorAll('rect').length : 0,
        size: r ? [r.width, r.height] : [0, 0]}; })""")
    if len(sections) != len(pairs):
        failures.append(f"{name}: {len(sections)} pair sections, the JSON report has {len(pairs)}")
    index_rows = b.eval("document.querySelectorAll('#pair-index tbody tr').length")
    if len(all_kernels) > 1 and pairs and index_rows != len(pairs):
        failures.append(f"{name}: pair index has {index_rows} rows for {len(pairs)} pair checks")
    for i, (p, s) in enumerate(zip(pairs, sections)):
        who = f"{name} pair check {i + 1} ({p['symbol']})"
        if s["symbol"] != p["symbol"]:
            failures.append(f"{who}: section is {s['symbol']}")
        if verdict_word(p["verdict"]["exit_code"]) not in s["verdict"]:
            failures.append(f"{who}: verdict shown {s['verdict']!r}, JSON exit code {p['verdict']['exit_code']}")
        if float(s["maxTitle"]) != p["accuracy"]["max_ulp"]:
            failures.append(f"{who}: max ulp {s['maxTitle']} shown, JSON {p['accuracy']['max_ulp']}")
        if s["coverage"] != p["coverage"]["text"]:
            failures.append(f"{who}: coverage {s['coverage']!r}, JSON {p['coverage']['text']!r}")
        worst = p["accuracy"]["worst"]
        if worst and (s["a"], s["b"]) != (f"({worst['a']['bits']})", f"({worst['b']['bits']})"):
            failures.append(f"{who}: worst pair shown {s['a']}, {s['b']}, JSON {worst['a']['bits']}, {worst['b']['bits']}")
        total = p["non_finite"]["regions_total"]
        rows = min(total, 6) + (1 if total > 6 else 0)
        if s["regions"] != rows:
            failures.append(f"{who}: {s['regions']} region rows, JSON has {total} regions")
        if s["cells"] == 0 or min(s["size"]) <= 0:
            failures.append(f"{who}: the heat map is not drawn ({s['cells']} rects, size {s['size']})")


def verdict_word(exit_code):
    return {0: "PASS", 3: "CRASHED"}.get(exit_code, "FAIL")


def check_kernels(b, kernels, failures, name, shots):
    """Sections against the JSON report, then hover and click on each worst bucket."""
    sections = b.eval("""Array.from(document.querySelectorAll('section.kernel')).map(s => ({
        symbol: s.dataset.symbol, verdict: s.querySelector('.badge.verdict').textContent,
        maxTitle: s.querySelector('.max-ulp').title, maxText: s.querySelector('.max-ulp').textContent,
        worst: (s.querySelector('.worst-input .bits') || {}).textContent || null}))""")
    if len(sections) != len(kernels):
        failures.append(f"{name}: {len(sections)} kernel sections, the JSON report has {len(kernels)}")
    index_rows = b.eval("document.querySelectorAll('#index tbody tr').length")
    if len(kernels) > 1 and index_rows != len(kernels):
        failures.append(f"{name}: index has {index_rows} rows for {len(kernels)} kernels")
    for i, (k, s) in enumerate(zip(kernels, sections)):
        who = f"{name} kernel {i + 1} ({k['kernel']['symbol']})"
        if s["symbol"] != k["kernel"]["symbol"]:
            failures.append(f"{who}: section is {s['symbol']}")
        if verdict_word(k["verdict"]["exit_code"]) not in s["verdict"]:
            failures.append(f"{who}: verdict shown {s['verdict']!r}, JSON exit code {k['verdict']['exit_code']}")
        max_ulp = k["accuracy"]["max_ulp"]
        if float(s["maxTitle"]) != max_ulp:
            failures.append(f"{who}: max ulp {s['maxTitle']} shown, JSON {max_ulp}")
        shown = f"{max_ulp:.4f} ulp" if max_ulp < 1e6 else None
        if shown and s["maxText"] != shown:
            failures.append(f"{who}: max ulp text {s['maxText']!r}, expected {shown!r}")
        worst = k["accuracy"]["worst"]
        if worst is None:
            continue
        if s["worst"] != f"({worst['input']['bits']})":
            failures.append(f"{who}: worst input shown {s['worst']}, JSON {worst['input']['bits']}")
        # Hover, then click, the worst bucket's bar.
        box = b.eval(f"""(() => {{ const s = document.querySelectorAll('section.kernel')[{i}];
            const bar = s.querySelector('rect[data-worst=true]'); if (!bar) return null;
            bar.scrollIntoView({{block: 'center'}}); const r = bar.getBoundingClientRect();
            return [r.left + r.width / 2, r.top + Math.max(2, r.height / 2)]; }})()""")
        if box is None:
            failures.append(f"{who}: no bar marked as the worst bucket")
            continue
        x, y = box
        b.mouse("mouseMoved", x, y)
        tip = b.eval(f"""(() => {{ const t = document.querySelectorAll('section.kernel')[{i}].querySelector('.tooltip');
            return t && !t.hidden ? t.textContent : null; }})()""")
        if tip is None or worst["input"]["bits"] not in tip:
            failures.append(f"{who}: hovering the worst bucket shows {tip!r}, not {worst['input']['bits']}")
        if i < shots:
            b.screenshot(os.path.join(OUT, f"{name}-hover-{i + 1}.png"))
        b.mouse("mousePressed", x, y)
        b.mouse("mouseReleased", x, y)
        pick = b.eval(f"""document.querySelectorAll('section.kernel')[{i}].querySelector('.pick').getAttribute('data-input-bits')""")
        if pick != worst["input"]["bits"]:
            failures.append(f"{who}: clicking the worst bucket pins {pick}, not {worst['input']['bits']}")
        b.mouse("mouseMoved", 2, 2)


def main():
    global OUT
    OUT = sys.argv[1]
    os.makedirs(OUT, exist_ok=True)
    failures = []
    b = Browser()
    try:
        for spec in sys.argv[2:]:
            kind, page, data = spec.split(":", 2)
            name = os.path.splitext(os.path.basename(page))[0]
            report = json.load(open(data))
            b.open(page)
            b.screenshot(os.path.join(OUT, f"{name}.png"))
            if kind == "check":
                check_kernels(b, one_input(kernels_of(report)), failures, name, shots=2)
                check_pairs(b, pairs_of(kernels_of(report)), kernels_of(report), failures, name)
            elif kind == "certify":
                shown = b.eval("document.querySelector('section.certificate').dataset.verdict")
                if shown != report["verdict"]:
                    failures.append(f"{name}: certificate verdict {shown}, JSON {report['verdict']}")
                check_kernels(b, [report["check"]], failures, name, shots=1)
            elif kind == "compare":
                shown = b.eval("document.querySelector('section.comparison').dataset.verdict")
                if shown != ("pass" if report["exit_code"] == 0 else "fail"):
                    failures.append(f"{name}: comparison verdict {shown}, JSON exit {report['exit_code']}")
                worse = sum(r["change"] == "worse" for k in report["kernels"] for r in k["rows"])
                rows = b.eval("document.querySelectorAll('tr.worse').length")
                if rows != worse:
                    failures.append(f"{name}: {rows} rows marked worse, JSON has {worse}")
                kernels = b.eval("document.querySelectorAll('section.kernel-diff').length")
                if kernels != len(report["kernels"]):
                    failures.append(f"{name}: {kernels} kernel tables, JSON has {len(report['kernels'])}")
            elif kind == "matrix":
                built = [x for x in report["builds"] if x["status"] == "built"]
                cells = b.eval("document.querySelectorAll('table.matrix-table tbody td').length")
                if cells != len(built) * len(report["kernels"]):
                    failures.append(f"{name}: {cells} cells for {len(report['kernels'])} kernels x {len(built)} builds")
            b.screenshot(os.path.join(OUT, f"{name}-full.png"), full=True)
            # The dark scheme renders too.
            b.eval("document.getElementById('theme').click()")
            b.screenshot(os.path.join(OUT, f"{name}-switched.png"))
            for p in b.problems():
                failures.append(f"{name}: {p}")
            print(f"check_pages: {name}: checked ({kind})")
    finally:
        b.close()
    for f in failures:
        print("FAIL", f)
    if failures:
        sys.exit(1)
    print(f"check_pages: every page passed; screenshots in {OUT}")


if __name__ == "__main__":
    main()
