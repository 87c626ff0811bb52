"""Open a vortcat report in headless Chromium over the DevTools protocol, make every image
load (the page lazy-loads them), and fail on console errors, uncaught exceptions, failed
requests or images that do not decode. Takes a screenshot of the whole page.

Usage: check_report.py CHROMIUM INDEX_HTML SCREENSHOT_PNG
"""
import base64
import json
import os
import subprocess
import sys
import tempfile
import time
import urllib.request

import websocket  # websocket-client, installed by scripts/test-browser

FLAGS = [
    "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
    "--disable-background-networking", "--disable-component-update", "--disable-sync",
    "--hide-scrollbars", "--remote-debugging-port=0", "--window-size=1300,1000",
]


def main():
    chromium, index, shot = sys.argv[1:4]
    profile = tempfile.mkdtemp(prefix="vortcat-chromium-")
    proc = subprocess.Popen(
        [chromium, *FLAGS, f"--user-data-dir={profile}", "about:blank"],
        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
    )
    try:
        return run(profile, index, shot)
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()


def run(profile, index, shot):
    port_file = os.path.join(profile, "DevToolsActivePort")
    for _ in range(300):
        if os.path.exists(port_file) and open(port_file).read().strip():
            break
        time.sleep(0.1)
    else:
        print("chromium did not start (no DevToolsActivePort)")
        return 1
    port = open(port_file).read().split()[0]
    targets = json.load(urllib.request.urlopen(f"http://127.0.0.1:{port}/json"))
    page = next(t for t in targets if t["type"] == "page")
    ws = websocket.create_connection(page["webSocketDebuggerUrl"], timeout=60)
    ids = iter(range(1, 1 << 30))
    problems = []

    def note(msg):
        m, p = msg.get("method"), msg.get("params", {})
        if m == "Runtime.consoleAPICalled" and p.get("type") in ("error", "assert"):
            text = " ".join(str(a.get("value", a.get("description", ""))) for a in p["args"])
            problems.append(f"console error: {text}")
        elif m == "Runtime.exceptionThrown":
            d = p["exceptionDetails"]
            problems.append(f"exception: {d.get('exception', {}).get('description', d.get('text'))}")
        elif m == "Log.entryAdded" and p["entry"]["level"] == "error":
            problems.append(f"log error: {p['entry'].get('text')} {p['entry'].get('url', '')}")
        elif m == "Network.loadingFailed":
            problems.append(f"request failed: {p.get('errorText')}")

    def call(method, **params):
        i = next(ids)
        ws.send(json.dumps({"id": i, "method": method, "params": params}))
        while True:
            msg = json.loads(ws.recv())
            if msg.get("id") == i:
                if "error" in msg:
                    raise RuntimeError(f"{method}: {msg['error']}")
                return msg.get("result", {})
            note(msg)

    def evaluate(expr):
        r = call("Runtime.evaluate", expression=expr, awaitPromise=True, returnByValue=True)
        if "exceptionDetails" in r:
            raise RuntimeError(f"evaluate failed: {r['exceptionDetails']}")
        return r["result"].get("value")

    for domain in ("Runtime", "Log", "Network", "Page"):
        call(f"{domain}.enable")
    call("Page.navigate", url="file://" + os.path.abspath(index))
    deadline = time.time() + 60
    while time.time() < deadline:
        if evaluate("document.readyState") == "complete":
            break
        time.sleep(0.2)
    ready = evaluate("document.body.getAttribute('data-ready')")
    if ready != "1":
        problems.append("the page script did not finish (data-ready is not set)")
    # Load every lazy image, then wait for all to settle and check that each decoded.
    status = evaluate("""
      (async () => {
        const imgs = Array.from(document.images);
        imgs.forEach(i => { i.loading = 'eager'; });
        await Promise.all(imgs.map(i => i.complete ? null :
          new Promise(r => { i.addEventListener('load', r); i.addEventListener('error', r); })));
        await Promise.all(imgs.map(i => i.decode().catch(() => null)));
        const bad = imgs.filter(i => !(i.complete && i.naturalWidth > 0)).map(i => i.getAttribute('src'));
        const rows = document.querySelectorAll('#fits tbody tr').length;
        return {images: imgs.length, bad: bad, rows: rows,
                scripts: document.querySelectorAll('script:not([type="application/json"])').length};
      })()
    """)
    print(f"images: {status['images']}, not loaded: {len(status['bad'])}, table rows shown: {status['rows']}")
    for src in status["bad"][:20]:
        problems.append(f"image did not load: {src}")
    if status["images"] == 0:
        problems.append("the report has no image")
    if status["rows"] == 0:
        problems.append("the fit table shows no row")
    # Drain events that arrived while images loaded.
    ws.settimeout(1.0)
    try:
        while True:
            note(json.loads(ws.recv()))
    except websocket.WebSocketTimeoutException:
        pass
    ws.settimeout(60)
    metrics = call("Page.getLayoutMetrics")
    size = metrics.get("cssContentSize", metrics.get("contentSize"))
    height = min(int(size["height"]), 7000)
    call("Emulation.setDeviceMetricsOverride", width=1300, height=height,
         deviceScaleFactor=1, mobile=False)
    time.sleep(0.5)
    data = call("Page.captureScreenshot", format="png", captureBeyondViewport=True,
                clip={"x": 0, "y": 0, "width": 1300, "height": height, "scale": 1})["data"]
    with open(shot, "wb") as f:
        f.write(base64.b64decode(data))
    print(f"screenshot: {shot} (1300 x {height} px of {int(size['height'])})")
    # Close-ups of the first vortex card and of the population section.
    for anchor in ("vortices", "population"):
        top = evaluate(f"document.getElementById('{anchor}').getBoundingClientRect().top + window.scrollY")
        if top is None:
            continue
        full = int(size["height"])
        call("Emulation.setDeviceMetricsOverride", width=1300, height=full,
             deviceScaleFactor=1, mobile=False)
        clip_h = min(2200, full - int(top))
        data = call("Page.captureScreenshot", format="png", captureBeyondViewport=True,
                    clip={"x": 0, "y": int(top), "width": 1300, "height": clip_h, "scale": 1})["data"]
        name = shot.replace(".png", f"-{anchor}.png")
        with open(name, "wb") as f:
            f.write(base64.b64decode(data))
        print(f"screenshot: {name}")
    ws.close()
    for p in problems:
        print(f"FAIL: {p}")
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
