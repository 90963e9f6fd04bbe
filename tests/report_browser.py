"""Open a finished run's report.html in headless Chromium and check what a reader sees.

Talks to the browser over its DevTools protocol on a pipe (``--remote-debugging-pipe``: JSON
messages ending in a NUL byte, the browser reading file descriptor 3 and writing 4), so it needs
no package beyond the standard library and Debian's ``chromium``.

    python tests/report_browser.py RESULTS_FOLDER     check RESULTS/report.html, keep a
                                                      screenshot RESULTS/report_start_page.png

Checks: the start page shows the cohort summary, every figure of the report decodes to an
image with a size in the browser (no broken image), and every HTML table page holds a table.
"""

from __future__ import annotations

import base64
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path

CHROMIUM_NAMES = ("chromium", "chromium-browser", "google-chrome")
CHROMIUM_FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                  "--no-first-run", "--disable-background-networking",
                  "--disable-component-update", "--disable-sync", "--hide-scrollbars")
START_PAGE_MARK = "Cohort at a glance"

#: shows every result of the report in turn, as a reader clicking through would, and reports
#: what the browser made of it
SHOW_EVERY_RESULT = """
(async () => {
  const settle = () => new Promise(r => setTimeout(r, 30));
  const out = [];
  for (const [path, entry] of Object.entries(results)) {
    const kind = entry.mime_type;
    if (kind.startsWith("image/")) {
      app.setView({content: "img", contentPath: entry.data_uri, resultPath: path});
      let img = null;
      for (let i = 0; i < 200; i++) {
        await settle();
        img = [...document.querySelectorAll("#app img")].find(x => x.src === entry.data_uri);
        if (img && img.complete) break;
      }
      out.push({path, kind, shown: !!img, width: img ? img.naturalWidth : 0,
                height: img ? img.naturalHeight : 0});
    } else {
      const text = await (await fetch(entry.data_uri)).text();
      out.push({path, kind, shown: true, has_table: text.includes("<table"),
                rows: (text.match(/<tr>/g) || []).length});
    }
  }
  return JSON.stringify(out);
})()
"""


def find_chromium() -> str | None:
    for name in CHROMIUM_NAMES:
        if path := shutil.which(name):
            return path
    return None


@dataclass
class Browser:
    """One headless Chromium driven over the DevTools pipe."""

    binary: str
    profile: Path
    process: subprocess.Popen | None = None
    to_browser: int = -1
    from_browser: int = -1
    next_id: int = 0
    buffer: bytes = b""
    events: list = field(default_factory=list)

    def __enter__(self):
        command_r, command_w = os.pipe()
        reply_r, reply_w = os.pipe()

        def wire_fds():  # in the child: the browser reads commands on 3, writes replies on 4
            commands, replies = os.dup(command_r), os.dup(reply_w)  # above 4: no clobbering
            os.dup2(commands, 3)  # dup2 makes 3 and 4 inheritable, so they survive exec
            os.dup2(replies, 4)

        self.process = subprocess.Popen(
            [self.binary, *CHROMIUM_FLAGS, f"--user-data-dir={self.profile}",
             "--remote-debugging-pipe", "--window-size=1400,1000", "about:blank"],
            close_fds=False, preexec_fn=wire_fds,
            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        os.close(command_r)
        os.close(reply_w)
        self.to_browser, self.from_browser = command_w, reply_r
        return self

    def __exit__(self, *exc):
        try:
            self.call("Browser.close")
        except Exception:
            pass
        for fd in (self.to_browser, self.from_browser):
            os.close(fd)
        try:
            self.process.wait(timeout=20)
        except subprocess.TimeoutExpired:
            self.process.kill()

    def _message(self) -> dict:
        while b"\0" not in self.buffer:
            chunk = os.read(self.from_browser, 1 << 20)
            if not chunk:
                raise RuntimeError("the browser closed its DevTools pipe")
            self.buffer += chunk
        raw, self.buffer = self.buffer.split(b"\0", 1)
        return json.loads(raw)

    def call(self, method: str, params: dict | None = None, session: str | None = None) -> dict:
        self.next_id += 1
        message = {"id": self.next_id, "method": method, "params": params or {}}
        if session:
            message["sessionId"] = session
        os.write(self.to_browser, json.dumps(message).encode() + b"\0")
        while True:
            reply = self._message()
            if reply.get("id") == self.next_id:
                if "error" in reply:
                    raise RuntimeError(f"{method}: {reply['error']}")
                return reply.get("result", {})
            self.events.append(reply)

    def open_page(self, url: str) -> str:
        target = self.call("Target.createTarget", {"url": "about:blank"})["targetId"]
        session = self.call("Target.attachToTarget", {"targetId": target,
                                                      "flatten": True})["sessionId"]
        self.call("Emulation.setDeviceMetricsOverride", {"width": 1400, "height": 1000,
                                                          "deviceScaleFactor": 1,
                                                          "mobile": False}, session)
        self.call("Page.navigate", {"url": url}, session)
        return session

    def evaluate(self, session: str, expression: str, *, timeout_s: float = 120):
        result = self.call("Runtime.evaluate", {"expression": expression, "awaitPromise": True,
                                                "returnByValue": True,
                                                "timeout": int(timeout_s * 1000)}, session)
        if "exceptionDetails" in result:
            raise RuntimeError(f"page script failed: {result['exceptionDetails']}")
        return result["result"].get("value")


@dataclass
class ReportView:
    start_text: str
    results: list[dict]
    screenshot: Path


def view_report(report: Path, screenshot: Path, *, binary: str | None = None,
                timeout_s: float = 120) -> ReportView:
    """What a reader sees in ``report``: the start page's text and every result shown in turn."""
    binary = binary or find_chromium()
    if binary is None:
        raise FileNotFoundError("no Chromium found (Debian: apt-get install chromium)")
    with tempfile.TemporaryDirectory(prefix="spikevar-browser-") as profile, \
            Browser(binary, Path(profile)) as browser:
        session = browser.open_page(Path(report).resolve().as_uri())
        deadline, text = time.monotonic() + timeout_s, ""
        while time.monotonic() < deadline:
            text = browser.evaluate(session, "document.body ? document.body.innerText : ''")
            if START_PAGE_MARK in (text or ""):
                break
            time.sleep(0.2)
        browser.evaluate(session, "window.scrollTo(0, 0); document.querySelectorAll('*')"
                                  ".forEach(x => { if (x.scrollTop) x.scrollTop = 0; }); 0")
        shot = browser.call("Page.captureScreenshot", {"format": "png"}, session)
        screenshot.write_bytes(base64.b64decode(shot["data"]))
        shown = json.loads(browser.evaluate(session, SHOW_EVERY_RESULT, timeout_s=timeout_s))
    return ReportView(start_text=text or "", results=shown, screenshot=screenshot)


def problems(view: ReportView) -> list[str]:
    """What is wrong with the report as seen (empty when all is well)."""
    found = []
    if START_PAGE_MARK not in view.start_text:
        found.append(f"the start page does not show '{START_PAGE_MARK}'")
    for item in view.results:
        if item["kind"].startswith("image/") and not (item["shown"] and item["width"] > 0):
            found.append(f"figure {item['path']} did not load in the browser")
        if item["kind"] == "text/html" and not item.get("has_table"):
            found.append(f"table page {item['path']} holds no table")
    return found


def main(results: str) -> int:
    root = Path(results)
    view = view_report(root / "report.html", root / "report_start_page.png")
    figures = sum(item["kind"].startswith("image/") for item in view.results)
    issues = problems(view)
    print(f"report: {figures} figures and {len(view.results) - figures} table pages shown; "
          f"screenshot {view.screenshot}")
    for issue in issues:
        print(f"  problem: {issue}")
    return 1 if issues else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1] if len(sys.argv) > 1 else "results/demo"))
