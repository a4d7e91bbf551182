#!/usr/bin/env python3
"""The monitor page in headless Chromium, driven over chromedriver's WebDriver
HTTP API (W3C WebDriver, standard library only).

Starts the real tensiled on its demo rig at 20x pace with the hand-over left
to a person (--demo-confirm-by-hand), opens the page and checks, from what the
page shows: the state badge and the values in large type change, the
stress-strain chart gets points, events are listed, the extensometer alert
shows with its confirm button and confirming from the page resumes the run,
the arming form refuses a bad specimen with a message naming the field, the
daemon's refusals are shown, and every resource the page loaded came from the
daemon while the browser could resolve no other host (as on a lab PC without
internet). Screenshots go to --out-dir for a person to look at.

Exit 0 when every check passed; 1 with the failed check named otherwise,
including when chromium or chromedriver is missing (scripts/install-deps
installs them): this test never passes by skipping.
"""
import argparse
import base64
import json
import os
import re
import shutil
import socket
import subprocess
import sys
import tempfile
import time
import urllib.error
import urllib.request

ELEMENT = "element-6066-11e4-a52e-4f735466cecf"  # W3C WebDriver's element key


class Failed(Exception):
    pass


def free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def http_json(method, url, body=None, token=None, timeout=30):
    data = None if body is None else json.dumps(body).encode()
    req = urllib.request.Request(url, data=data, method=method)
    req.add_header("Content-Type", "application/json")
    if token:
        req.add_header("Authorization", "Bearer " + token)
    try:
        with urllib.request.urlopen(req, timeout=timeout) as r:
            return r.status, json.loads(r.read() or b"null")
    except urllib.error.HTTPError as e:
        return e.code, json.loads(e.read() or b"null")


class Browser:
    """The few WebDriver commands the test needs."""

    def __init__(self, driver_port, chromium, profile_dir):
        self.base = "http://127.0.0.1:%d" % driver_port
        args = ["--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                "--window-size=1400,1000", "--user-data-dir=" + profile_dir, "--no-first-run",
                "--disable-background-networking", "--disable-component-update",
                # No internet: every host name but the loopback address fails to resolve.
                "--host-resolver-rules=MAP * ~NOTFOUND , EXCLUDE 127.0.0.1"]
        caps = {"capabilities": {"alwaysMatch": {"browserName": "chrome",
                                                 "goog:chromeOptions": {"binary": chromium, "args": args}}}}
        status, answer = http_json("POST", self.base + "/session", caps, timeout=60)
        if status != 200:
            raise Failed("chromedriver could not start chromium: %s" % answer)
        self.session = self.base + "/session/" + answer["value"]["sessionId"]

    def cmd(self, method, path, body=None):
        status, answer = http_json(method, self.session + path, body)
        if status != 200:
            raise Failed("WebDriver %s %s: %s" % (method, path, answer.get("value", answer)))
        return answer["value"]

    def open(self, url):
        self.cmd("POST", "/url", {"url": url})

    def js(self, script, *args):
        return self.cmd("POST", "/execute/sync", {"script": script, "args": list(args)})

    def find(self, css):
        return self.cmd("POST", "/element", {"using": "css selector", "value": css})[ELEMENT]

    def click(self, css):
        self.cmd("POST", "/element/%s/click" % self.find(css), {})

    def type(self, css, text):
        el = self.find(css)
        self.cmd("POST", "/element/%s/clear" % el, {})
        self.cmd("POST", "/element/%s/value" % el, {"text": text})

    def text(self, css):
        return self.cmd("GET", "/element/%s/text" % self.find(css))

    def displayed(self, css):
        return self.cmd("GET", "/element/%s/displayed" % self.find(css))

    def screenshot(self, path):
        with open(path, "wb") as f:
            f.write(base64.b64decode(self.cmd("GET", "/screenshot")))

    def close(self):
        try:
            http_json("DELETE", self.session, timeout=10)
        except Exception:
            pass


def wait(what, ready, seconds, shown=None):
    """Polls `ready` until it gives something true; `shown` says what the page showed instead."""
    until = time.monotonic() + seconds
    while time.monotonic() < until:
        last = ready()
        if last:
            return last
        time.sleep(0.1)
    raise Failed("waited %.0f s for %s%s" % (seconds, what, "; the page showed: %r" % shown() if shown else ""))


def start_daemon(bin_dir, data_dir, log_path):
    log = open(log_path, "w")
    proc = subprocess.Popen([os.path.join(bin_dir, "tensiled"), "--demo", "--demo-speed", "20",
                             "--demo-confirm-by-hand", "--demo-data", data_dir, "--monitor-port", "0"],
                            stdout=log, stderr=subprocess.STDOUT)
    def port():
        m = re.search(r"monitor http://127\.0\.0\.1:(\d+)/", open(log_path).read())
        return int(m.group(1)) if m else None
    return proc, wait("tensiled to print its monitor address", port, 20)


def check(ok, what):
    if not ok:
        raise Failed(what)
    print("ok: " + what)


def run(args):
    chromium = shutil.which("chromium") or shutil.which("chromium-browser")
    driver = shutil.which("chromedriver")
    if not chromium or not driver:
        raise Failed("chromium and chromedriver are needed (Debian packages chromium and chromium-driver; "
                     "scripts/install-deps installs them); found chromium=%s chromedriver=%s" % (chromium, driver))
    os.makedirs(args.out_dir, exist_ok=True)
    work = tempfile.mkdtemp(prefix="tensiled-page-")
    data = os.path.join(work, "data")
    procs = []
    browser = None
    try:
        daemon, port = start_daemon(args.bin_dir, data, os.path.join(args.out_dir, "page-test-tensiled.log"))
        procs.append(daemon)
        api = "http://127.0.0.1:%d" % port
        token = open(os.path.join(data, "monitor.token")).read().strip()

        driver_port = free_port()
        procs.append(subprocess.Popen([driver, "--port=%d" % driver_port], stdout=subprocess.DEVNULL,
                                      stderr=subprocess.DEVNULL))
        wait("chromedriver to answer", lambda: _driver_ready(driver_port), 20)
        browser = Browser(driver_port, chromium, os.path.join(work, "profile"))
        browser.open(api + "/")
        check(browser.js("return typeof Chart !== 'undefined'"), "the chart library loaded from the daemon")
        check("no interlock" in browser.text("footer.safety"), "the safety note is on the page")
        browser.type("#token", token)

        # State and values in large type follow the run.
        state = wait("the state badge to show armed or running",
                     lambda: browser.text("#state") in ("ARMED", "RUNNING") and browser.text("#state"), 30)
        print("state badge: " + state)
        first = wait("a force reading", lambda: re.fullmatch(r"-?\d+\.\d{3}", browser.text("#v-force")) and
                     browser.text("#v-force"), 20)
        wait("the state badge to show running", lambda: browser.text("#state") == "RUNNING", 30)
        changed = wait("the force reading to change", lambda: browser.text("#v-force") != first and browser.text("#v-force"), 20)
        print("force reading: %s kN, then %s kN" % (first, changed))
        wait("a stress reading", lambda: re.fullmatch(r"-?\d+\.\d", browser.text("#v-stress")), 20)
        size = browser.js("return parseFloat(getComputedStyle(document.getElementById('v-force')).fontSize)")
        check(size >= 32, "values are in large type (force at %.0f px)" % size)

        points = wait("the stress-strain chart to get 20 points",
                      lambda: (browser.js("const c = Chart.getChart(document.getElementById('plot-ss'));"
                                          "return c ? c.data.datasets[0].data.length : 0") or 0) >= 20 and
                      browser.js("return Chart.getChart(document.getElementById('plot-ss')).data.datasets[0].data.length"), 60)
        print("stress-strain points: %d" % points)

        # The hand-over: the alert, its button, and confirming from the page.
        wait("the extensometer alert", lambda: browser.displayed("#alert"), 90)
        check(browser.displayed("#confirm-handover"), "the alert shows its confirm button")
        check("extensometer" in browser.text("#alert").lower(), "the alert names the extensometer")
        events = browser.text("#events")
        check("Rp0.2" in events or "ReH" in events, "the proof or yield event is listed (%s)" %
              events.replace("\n", " | ")[:200])
        marks = browser.js("return Chart.getChart(document.getElementById('plot-ss')).data.datasets[1].data.length")
        check(marks >= 1, "the event is marked on the curve (%d marks)" % marks)
        browser.screenshot(os.path.join(args.out_dir, "page-handover.png"))
        status, s = http_json("GET", api + "/api/v1/status")
        check(s["handover"] == "waiting", "the daemon waits for the hand-over")

        # A tare while running is refused, and the page says why.
        browser.click("#btn-tare")
        msg = wait("the tare refusal", lambda: browser.text("#cmd-msg"), 10)
        check("running" in msg, "the page shows why the tare was refused: " + msg)

        # Arming: a bad specimen is refused before sending, naming the field.
        browser.js("const f = document.getElementById('arm-form'); f.shape.value = 'rectangular';"
                   "f.shape.dispatchEvent(new Event('change'));")
        browser.type("#arm-form input[name=label]", "page check 1")
        browser.type("#arm-form input[name=width_mm]", "0")
        browser.type("#arm-form input[name=thickness_mm]", "2")
        browser.type("#arm-form input[name=gauge_length_mm]", "50")
        browser.click("#arm-form button[type=submit]")
        msg = wait("the arming message", lambda: browser.text("#arm-msg"), 10)
        check("width" in msg and "above zero" in msg, "a zero width is refused with the field named: " + msg)
        check("bad" in browser.js("return document.getElementById('arm-msg').className"), "the refusal is shown as an error")
        # A good specimen while the run is held for the hand-over: the daemon refuses, the page shows why.
        browser.type("#arm-form input[name=width_mm]", "12.5")
        browser.click("#arm-form button[type=submit]")
        msg = wait("the daemon's refusal", lambda: "cannot arm" in browser.text("#arm-msg") and browser.text("#arm-msg"), 10,
                   lambda: browser.text("#arm-msg"))
        check("running" in msg, "the daemon's refusal is shown: " + msg)

        browser.click("#confirm-handover")
        wait("the alert to go", lambda: not browser.displayed("#alert"), 10)
        status, s = http_json("GET", api + "/api/v1/status")
        check(s["handover"] == "done", "confirming from the page finished the hand-over")
        check("done" in browser.text("#cmd-msg"), "the page says the command was done: " + browser.text("#cmd-msg"))

        # The run ends at fracture; the history lists it and shows its curve and results.
        wait("the stored run in the history", lambda: "finished" in browser.text("#runs"), 90)
        browser.click("#runs tr")
        wait("the stored run's details", lambda: browser.displayed("#run-detail"), 10)
        past = wait("the stored run's curve", lambda: browser.js(
            "const c = Chart.getChart(document.getElementById('plot-past')); return c ? c.data.datasets[0].data.length : 0"), 15)
        check(past >= 100, "the stored run's curve has %d points" % past)
        check("Rm_MPa" in browser.text("#run-results"), "the stored run's results are listed")

        # No internet: everything the page loaded came from the daemon.
        urls = browser.js("return performance.getEntriesByType('resource').map(e => e.name)"
                          ".concat([...document.querySelectorAll('[src],[href]')].map(e => e.src || e.href))"
                          ".concat([location.href])")
        foreign = [u for u in urls if not (u.startswith(api + "/") or u.startswith("javascript:"))]
        check(len(urls) > 3 and not foreign, "all %d URLs the page used are the daemon's (foreign: %s)" % (len(urls), foreign))
        browser.cmd("POST", "/window/rect", {"width": 1400, "height": 2000})
        browser.js("window.scrollTo(0, 0)")
        browser.screenshot(os.path.join(args.out_dir, "page-after-run.png"))
        print("screenshots: %s" % os.path.join(args.out_dir, "page-*.png"))
    finally:
        if browser:
            browser.close()
        for p in reversed(procs):
            p.terminate()
            try:
                p.wait(timeout=15)
            except subprocess.TimeoutExpired:
                p.kill()
        shutil.rmtree(work, ignore_errors=True)


def _driver_ready(port):
    try:
        status, answer = http_json("GET", "http://127.0.0.1:%d/status" % port, timeout=2)
        return status == 200 and answer["value"]["ready"]
    except OSError:
        return False


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--bin-dir", required=True, help="folder with tensiled and tensile-sim")
    ap.add_argument("--out-dir", required=True, help="where the screenshots and the daemon's log go")
    args = ap.parse_args()
    try:
        run(args)
    except Failed as e:
        print("page test FAILED: %s" % e)
        return 1
    print("page test passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
