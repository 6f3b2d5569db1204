"""The review page in a real browser: headless Chromium, driven over the DevTools protocol.

Chromium is driven directly (no browser download of a test framework): with
``--remote-debugging-pipe`` it reads DevTools protocol commands as JSON, each ended
by a NUL byte, from file descriptor 3 and answers on descriptor 4. The test opens
the page from a file URL, types into the search box key by key, checks what the
tree and the topic card show, and saves a screenshot. Skips when Chromium is not
installed (``.ci/run`` installs Debian's package).
"""

from __future__ import annotations

import base64
import contextlib
import json
import os
import select
import shutil
import subprocess
import time
from pathlib import Path

import pytest

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
pytestmark = pytest.mark.skipif(
    CHROMIUM is None, reason="chromium is not installed (.ci/run installs it with apt-get)"
)


class DevTools:
    """A minimal DevTools protocol client over Chromium's debugging pipe."""

    def __init__(self, profile: Path):
        to_r, self._to = os.pipe()
        self._from, from_w = os.pipe()

        def wire():  # in the child: the pipe ends become descriptors 3 and 4
            os.dup2(to_r, 3)
            os.dup2(from_w, 4)

        args = [
            CHROMIUM,
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--no-first-run",
            "--hide-scrollbars",
            "--window-size=1280,900",
            f"--user-data-dir={profile}",
            "--remote-debugging-pipe",
            "about:blank",
        ]
        self.proc = subprocess.Popen(
            args,
            preexec_fn=wire,
            pass_fds=(3, 4),
            stdin=subprocess.DEVNULL,
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
        )
        os.close(to_r)
        os.close(from_w)
        self._buf = b""
        self._id = 0
        self.events: list[dict] = []
        self.session: str | None = None

    def _read(self, deadline: float) -> dict:
        while b"\0" not in self._buf:
            left = deadline - time.monotonic()
            if left <= 0 or not select.select([self._from], [], [], left)[0]:
                raise TimeoutError("no answer from chromium")
            chunk = os.read(self._from, 1 << 16)
            if not chunk:
                raise RuntimeError("chromium closed the debugging pipe")
            self._buf += chunk
        msg, self._buf = self._buf.split(b"\0", 1)
        return json.loads(msg)

    def send(self, method: str, timeout: float = 20, **params) -> dict:
        self._id += 1
        msg = {"id": self._id, "method": method, "params": params}
        if self.session and not method.startswith("Target."):
            msg["sessionId"] = self.session
        os.write(self._to, json.dumps(msg).encode() + b"\0")
        deadline = time.monotonic() + timeout
        while True:
            answer = self._read(deadline)
            if answer.get("id") == self._id:
                if "error" in answer:
                    raise RuntimeError(f"{method}: {answer['error']}")
                return answer.get("result", {})
            self.events.append(answer)

    def evaluate(self, expression: str):
        res = self.send("Runtime.evaluate", expression=expression, returnByValue=True)
        if "exceptionDetails" in res:
            raise RuntimeError(f"page script failed: {res['exceptionDetails']}")
        return res["result"].get("value")

    def wait_for(self, expression: str, timeout: float = 15):
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            value = self.evaluate(expression)
            if value:
                return value
            time.sleep(0.05)
        raise TimeoutError(f"page never satisfied: {expression}")

    def type_text(self, text: str) -> None:
        for ch in text:
            self.send("Input.dispatchKeyEvent", type="keyDown", text=ch, key=ch)
            self.send("Input.dispatchKeyEvent", type="keyUp", key=ch)

    def press(self, key: str, code: int) -> None:
        for kind in ("rawKeyDown", "keyUp"):
            self.send(
                "Input.dispatchKeyEvent",
                type=kind,
                key=key,
                code=key,
                windowsVirtualKeyCode=code,
                nativeVirtualKeyCode=code,
            )

    def close(self) -> None:
        with contextlib.suppress(RuntimeError, TimeoutError, OSError):
            self.send("Browser.close", timeout=5)
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()
        os.close(self._to)
        os.close(self._from)


@pytest.fixture
def browser(tmp_path):
    tools = DevTools(tmp_path / "chromium-profile")
    try:
        targets = tools.send("Target.getTargets")["targetInfos"]
        page = next(t for t in targets if t["type"] == "page")
        tools.session = tools.send(
            "Target.attachToTarget", targetId=page["targetId"], flatten=True
        )["sessionId"]
        tools.send("Page.enable")
        tools.send("Runtime.enable")
        yield tools
    finally:
        tools.close()


VISIBLE_HITS = (
    "Array.from(document.querySelectorAll('#tree li.hit'))"
    ".filter(li => li.offsetParent !== null).map(li => li.dataset.id)"
)


def test_search_box_filters_the_tree_and_opens_a_topic(browser, demo_workspace, tmp_path):
    page = demo_workspace["page"]
    browser.send("Page.navigate", url=page.resolve().as_uri())
    browser.wait_for("document.body && document.body.dataset.ready === 'true'")
    # unfiltered: the roots are open, deep topics folded away
    assert browser.evaluate("document.getElementById('search-status').textContent") == ""
    assert browser.evaluate("document.querySelectorAll('#tree ul.roots > li').length") >= 2

    browser.evaluate("document.getElementById('search').focus()")
    browser.type_text("kayak polo")  # an alias, not a label
    browser.wait_for("document.getElementById('search-status').textContent.includes('match')")
    assert browser.evaluate("document.getElementById('search-status').textContent") == (
        "1 topic matches"
    )
    assert browser.evaluate(VISIBLE_HITS) == ["canoe-polo"]
    hint = browser.evaluate("document.querySelector('#tree li.hit .hint').textContent")
    assert hint == "alias: kayak polo"
    assert browser.evaluate("document.querySelector('#tree li.hit .hint mark').textContent") == (
        "kayak polo"
    )
    # its ancestors stay visible and unfolded; unrelated topics are hidden
    shown = browser.evaluate(
        "Array.from(document.querySelectorAll('#tree li.node'))"
        ".filter(li => li.offsetParent !== null).map(li => li.dataset.id)"
    )
    assert shown == ["leisure", "water-sports", "paddle-sports", "canoe-polo"]

    browser.press("Enter", 13)
    browser.wait_for("!!document.querySelector('#detail h3')")
    card = browser.evaluate("document.getElementById('detail').innerText")
    assert card.split()[:3] == ["canoe", "polo", "canoe-polo"]
    assert "Kanupolo" in card and "kayak polo" in card
    assert "paddle sports" in card  # its parent, by label
    assert "http://demo.kgkit.invalid/e/canoe-polo" in card  # where it came from

    # a label in German, typed in another case, finds the topic as well
    browser.evaluate("const s = document.getElementById('search'); s.select();")
    browser.type_text("FREIWASSER")
    browser.wait_for("document.getElementById('search-status').textContent.includes('topic match')")
    assert browser.evaluate(VISIBLE_HITS) == ["open-water-swimming"]
    hint = browser.evaluate("document.querySelector('#tree li.hit .hint').textContent")
    assert hint == "label de: Freiwasserschwimmen"  # the English label is shown, the hit named

    # nothing found says so
    browser.evaluate("document.getElementById('search').select()")
    browser.type_text("zzqx")
    browser.wait_for("document.getElementById('search-status').textContent.startsWith('no ')")
    assert browser.evaluate(VISIBLE_HITS) == []

    browser.evaluate("document.getElementById('search').select()")
    browser.type_text("polo")
    browser.wait_for("document.getElementById('search-status').textContent.includes('match')")
    assert browser.evaluate(VISIBLE_HITS) == ["canoe-polo", "paddleboard-polo"]
    # the English labels match, so they are marked in place (not the German ones named)
    marks = (
        "Array.from(document.querySelectorAll('#tree li.hit .name mark')).map(m => m.textContent)"
    )
    assert browser.evaluate(marks) == ["polo", "polo"]
    assert browser.evaluate("document.querySelector('#tree li.hit .hint').textContent") == ""
    browser.press("Enter", 13)
    browser.wait_for("document.querySelector('#tree li.current') !== null")
    shot = browser.send("Page.captureScreenshot", format="png")["data"]
    out = Path(os.environ.get("KGKIT_SCREENSHOT_DIR", tmp_path)) / "review-search.png"
    out.write_bytes(base64.b64decode(shot))
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (RFC 2083)


def test_fragment_opens_a_topic_and_fills_the_search(browser, demo_workspace):
    url = demo_workspace["page"].resolve().as_uri() + "#topic=net-mending"
    browser.send("Page.navigate", url=url)
    browser.wait_for("document.body && document.body.dataset.ready === 'true'")
    card = browser.wait_for(
        "document.querySelector('#detail h3') && document.getElementById('detail').innerText"
    )
    assert card.split()[:3] == ["net", "mending", "net-mending"]
    assert "Netzflicken" in card  # the German label the curation file set
    assert browser.evaluate("document.querySelector('#tree li.current').dataset.id") == (
        "net-mending"
    )
    # the page made no request beyond its own file
    assert browser.evaluate("performance.getEntriesByType('resource').length") == 0
