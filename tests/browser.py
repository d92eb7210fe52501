"""Drive a headless Chromium over the DevTools protocol on a pipe (standard library only).

``load(url)`` opens ``url``, collects console messages, uncaught exceptions and log
entries (failed network requests among them), evaluates an expression once the page
has loaded and returns them with a PNG screenshot.  Used by the viewer test; also run
by hand: ``python tests/browser.py PAGE.html OUT.png``.
"""
from __future__ import annotations

import base64
import contextlib
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
         "--disable-component-update", "--disable-sync", "--no-first-run", "--remote-debugging-pipe",
         "--enable-unsafe-swiftshader", "--use-angle=swiftshader", "--window-size=1200,800"]


def chromium() -> str | None:
    for name in ("chromium", "chromium-browser", "google-chrome"):
        path = shutil.which(name)
        if path:
            return path
    return None


class _Pipe:
    def __init__(self, send: int, receive: int):
        self.send, self.receive, self.buffer, self.next_id = send, receive, b"", 0
        self.events: list[dict] = []

    def call(self, method: str, timeout: float = 30.0, session: str | None = None, **params) -> dict:
        """Send one command (to the page ``session`` if given) and wait for its answer,
        keeping the events that arrive meanwhile."""
        self.next_id += 1
        msg = {"id": self.next_id, "method": method, "params": params}
        if session is not None:
            msg["sessionId"] = session
        os.write(self.send, json.dumps(msg).encode() + b"\0")
        deadline = time.monotonic() + timeout
        while True:
            msg = self.read(deadline)
            if msg.get("id") == self.next_id:
                if "error" in msg:
                    raise RuntimeError(f"{method}: {msg['error']}")
                return msg.get("result", {})
            self.events.append(msg)

    def read(self, deadline: float) -> dict:
        import select
        while b"\0" not in self.buffer:
            left = deadline - time.monotonic()
            if left <= 0 or not select.select([self.receive], [], [], left)[0]:
                raise TimeoutError("no answer from the browser")
            chunk = os.read(self.receive, 1 << 20)
            if not chunk:
                raise RuntimeError("the browser closed the pipe")
            self.buffer += chunk
        raw, self.buffer = self.buffer.split(b"\0", 1)
        return json.loads(raw)

    def wait_for(self, method: str, timeout: float = 30.0) -> dict:
        deadline = time.monotonic() + timeout
        for i, e in enumerate(self.events):
            if e.get("method") == method:
                return self.events.pop(i)
        while True:
            msg = self.read(deadline)
            if msg.get("method") == method:
                return msg
            self.events.append(msg)


def load(url: str, expression: str, settle: float = 1.0) -> dict:
    """Open ``url``; return ``{"value", "console", "exceptions", "log", "png"}``."""
    exe = chromium()
    if exe is None:
        raise FileNotFoundError("chromium")
    to_child, from_parent = os.pipe()   # the browser reads commands on its fd 3
    from_child, to_parent = os.pipe()   # and writes answers on its fd 4
    profile = tempfile.mkdtemp(prefix="helix-browser-")

    def fds() -> None:
        # Copies first: a pipe end may already be fd 3 or 4 (dup2 onto itself would
        # leave it non-inheritable, closed at exec).
        a, b = os.dup(to_child), os.dup(to_parent)
        os.dup2(a, 3)
        os.dup2(b, 4)

    proc = subprocess.Popen([exe, *FLAGS, f"--user-data-dir={profile}", "about:blank"], preexec_fn=fds,
                            close_fds=False, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    os.close(to_child)
    os.close(to_parent)
    pipe = _Pipe(from_parent, from_child)
    try:
        target = pipe.call("Target.createTarget", url="about:blank")["targetId"]
        session = pipe.call("Target.attachToTarget", targetId=target, flatten=True)["sessionId"]

        def call(method: str, **params) -> dict:
            return pipe.call(method, session=session, **params)

        for domain in ("Page", "Runtime", "Log"):
            call(f"{domain}.enable")
        call("Page.navigate", url=url)
        pipe.wait_for("Page.loadEventFired")
        time.sleep(settle)
        value = call("Runtime.evaluate", expression=expression, returnByValue=True)["result"].get("value")
        png = base64.b64decode(call("Page.captureScreenshot", format="png")["data"])
        ev = pipe.events
        return {"value": value, "png": png,
                "console": [e["params"] for e in ev if e.get("method") == "Runtime.consoleAPICalled"],
                "exceptions": [e["params"] for e in ev if e.get("method") == "Runtime.exceptionThrown"],
                "log": [e["params"]["entry"] for e in ev if e.get("method") == "Log.entryAdded"]}
    finally:
        with contextlib.suppress(Exception):
            pipe.call("Browser.close", timeout=5)
            proc.wait(timeout=10)
        if proc.poll() is None:
            proc.kill()
        proc.wait(timeout=10)
        os.close(from_parent)
        os.close(from_child)
        shutil.rmtree(profile, ignore_errors=True)


if __name__ == "__main__":  # pragma: no cover
    from pathlib import Path
    out = load(Path(sys.argv[1]).resolve().as_uri(), "JSON.stringify(window.helixViewer)")
    Path(sys.argv[2]).write_bytes(out["png"])
    print(out["value"], out["console"], out["exceptions"], out["log"])
