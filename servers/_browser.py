"""Headless Chromium (Debian's ``chromium``) driven over the DevTools protocol, for tests.

``HeadlessChromium().start()`` launches the browser on 127.0.0.1 with a throwaway profile and
``--remote-debugging-port=0``; :meth:`open` loads a page in a fresh tab and returns a
:class:`Tab` that collects console errors, exceptions and network requests, evaluates
JavaScript and takes full-page screenshots (PNG bytes). :meth:`stop` ends the process.
"""

from __future__ import annotations

import base64
import json
import shutil
import subprocess
import tempfile
import time
import urllib.request
from pathlib import Path
from typing import Any

from servers._errors import ServerError, ServerUnavailableError

BINARIES = ("chromium", "chromium-browser", "google-chrome")


class Tab:
    """One page over its DevTools websocket; events are kept as they arrive."""

    def __init__(self, ws_url: str) -> None:
        from websockets.sync.client import connect

        self._connection = connect(ws_url, max_size=None, open_timeout=20)
        self._ws = self._connection.__enter__()  # the context-manager form, closed in close()
        self._next = 0
        self.events: list[dict[str, Any]] = []
        for domain in ("Page", "Runtime", "Log", "Network"):
            self.call(f"{domain}.enable")

    def call(self, method: str, **params: Any) -> dict[str, Any]:
        self._next += 1
        ident = self._next
        self._ws.send(json.dumps({"id": ident, "method": method, "params": params}))
        while True:
            message = json.loads(self._ws.recv(timeout=60))
            if message.get("id") == ident:
                if "error" in message:
                    raise ServerError(f"{method}: {message['error']}")
                return message.get("result", {})
            self.events.append(message)

    def wait_for(self, event: str, timeout: float = 30) -> None:
        deadline = time.monotonic() + timeout
        while not any(e.get("method") == event for e in self.events):
            if time.monotonic() > deadline:
                raise ServerError(f"no {event} within {timeout} s")
            self.events.append(json.loads(self._ws.recv(timeout=timeout)))

    def evaluate(self, expression: str) -> Any:
        result = self.call("Runtime.evaluate", expression=expression, returnByValue=True)
        if "exceptionDetails" in result:
            raise ServerError(f"script failed: {result['exceptionDetails']}")
        return result["result"].get("value")

    def problems(self) -> list[str]:
        """Console errors, uncaught exceptions and error log entries seen so far."""
        out = []
        for e in self.events:
            method, params = e.get("method"), e.get("params", {})
            if method == "Runtime.consoleAPICalled" and params.get("type") in ("error", "assert"):
                out.append(f"console: {params.get('args')}")
            elif method == "Runtime.exceptionThrown":
                out.append(f"exception: {params.get('exceptionDetails')}")
            elif method == "Log.entryAdded" and params["entry"].get("level") == "error":
                out.append(f"log: {params['entry'].get('text')}")
        return out

    def requested_urls(self) -> list[str]:
        return [
            e["params"]["request"]["url"]
            for e in self.events
            if e.get("method") == "Network.requestWillBeSent"
        ]

    def screenshot(self, width: int) -> bytes:
        """The whole page as PNG, at ``width`` CSS pixels and device scale 1."""
        height = int(self.evaluate("document.documentElement.scrollHeight"))
        self.call(
            "Emulation.setDeviceMetricsOverride",
            width=width,
            height=height,
            deviceScaleFactor=1,
            mobile=False,
        )
        shot = self.call("Page.captureScreenshot", format="png", captureBeyondViewport=True)
        return base64.b64decode(shot["data"])

    def close(self) -> None:
        self._connection.__exit__(None, None, None)


class HeadlessChromium:
    kind = "chromium"

    def __init__(self) -> None:
        self.process: subprocess.Popen[bytes] | None = None
        self.profile: Path | None = None
        self.port = 0

    def start(self) -> None:
        binary = next((b for b in map(shutil.which, BINARIES) if b), None)
        if binary is None:
            raise ServerUnavailableError(
                "no chromium on PATH (scripts/test installs Debian's 'chromium' as root)"
            )
        try:
            import websockets  # noqa: F401
        except ImportError as exc:
            raise ServerUnavailableError("the 'websockets' package is missing") from exc
        self.profile = Path(tempfile.mkdtemp(prefix="graphmill-chromium-"))
        self.process = subprocess.Popen(
            [
                binary,
                "--headless",
                "--no-sandbox",
                "--disable-gpu",
                "--hide-scrollbars",
                "--no-first-run",
                "--remote-debugging-address=127.0.0.1",
                "--remote-debugging-port=0",
                f"--user-data-dir={self.profile}",
                "about:blank",
            ],
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
        )
        port_file = self.profile / "DevToolsActivePort"
        deadline = time.monotonic() + 30
        while not port_file.exists() or not port_file.read_text().strip():
            if self.process.poll() is not None or time.monotonic() > deadline:
                self.stop()
                raise ServerError("chromium did not open its DevTools port")
            time.sleep(0.1)
        self.port = int(port_file.read_text().split()[0])

    def open(self, url: str) -> Tab:
        """A new tab on ``url``, loaded (the load event fired)."""
        request = urllib.request.Request(
            f"http://127.0.0.1:{self.port}/json/new?about:blank", method="PUT"
        )
        with urllib.request.urlopen(request, timeout=20) as response:  # 127.0.0.1 only
            target = json.loads(response.read())
        tab = Tab(target["webSocketDebuggerUrl"])
        tab.call("Page.navigate", url=url)
        tab.wait_for("Page.loadEventFired")
        return tab

    def stop(self) -> None:
        if self.process is not None:
            self.process.terminate()
            try:
                self.process.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.process.kill()
                self.process.wait()
            self.process = None
        if self.profile is not None:
            shutil.rmtree(self.profile, ignore_errors=True)
            self.profile = None
