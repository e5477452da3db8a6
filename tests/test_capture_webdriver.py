"""`tapgauge capture --webdriver` against a W3C WebDriver remote end written here.

The stand-in server follows the W3C WebDriver editor's draft (w3c/webdriver index.bs, re-read):
- "Processing model": a success is HTTP 200, Content-Type "application/json; charset=utf-8",
  Cache-Control "no-cache", body {"value": data}; a request is first matched to an endpoint
  ("Routing requests": none matches -> unknown command, 404; wrong method -> unknown method,
  405), then its session id is looked up (none -> invalid session id, 404).
- "Errors": {"value": {"error": code, "message": ..., "stacktrace": ...}} with the code's HTTP
  status from the spec's table.
- "Get Page Source" (GET /session/{session id}/source): data is the source string.
- "Take Screenshot" (GET /session/{session id}/screenshot): data is the PNG in Base64.
- "Get Window Rect" (GET /session/{session id}/window/rect): data is {x, y, width, height}.
It listens on 127.0.0.1 only, on a port the system picks, and is shut down after each test.
The page sources are invented screens of the demo's garden-plot booking app.
"""

from __future__ import annotations

import base64
import io
import json
import socket
import threading
from collections.abc import Iterator
from dataclasses import dataclass, field
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path
from typing import Any

import pytest
from PIL import Image

from tapgauge.cli import main
from tapgauge.webcapture import Rect, ios_scale

SESSION = "5f0c7e2a-garden-plots"

ANDROID_SOURCE = """<?xml version='1.0' encoding='UTF-8' standalone='yes' ?>
<hierarchy index="0" class="hierarchy" rotation="0" width="1080" height="2400">
  <node index="0" text="" resource-id="" class="android.widget.FrameLayout" package="org.fernwick.allotments" content-desc="" checkable="false" checked="false" clickable="false" enabled="true" focusable="false" focused="false" scrollable="false" long-clickable="false" password="false" selected="false" visible-to-user="true" bounds="[0,0][1080,2400]">
    <node index="0" text="" resource-id="org.fernwick.allotments:id/back" class="android.widget.ImageButton" package="org.fernwick.allotments" content-desc="Back" checkable="false" checked="false" clickable="true" enabled="true" focusable="true" focused="false" scrollable="false" long-clickable="false" password="false" selected="false" visible-to-user="true" bounds="[11,77][143,209]" />
    <node index="1" text="Plot 14, south bed" resource-id="" class="android.widget.TextView" package="org.fernwick.allotments" content-desc="" checkable="false" checked="false" clickable="false" enabled="true" focusable="false" focused="false" scrollable="false" long-clickable="false" password="false" selected="false" visible-to-user="true" bounds="[187,99][900,187]" />
    <node index="2" text="" resource-id="org.fernwick.allotments:id/plot_info" class="android.widget.ImageButton" package="org.fernwick.allotments" content-desc="About this plot" checkable="false" checked="false" clickable="true" enabled="true" focusable="true" focused="false" scrollable="false" long-clickable="false" password="false" selected="false" visible-to-user="true" bounds="[960,110][1026,176]" />
    <node index="3" text="Shared water butt" resource-id="org.fernwick.allotments:id/water_butt" class="android.widget.CheckBox" package="org.fernwick.allotments" content-desc="" checkable="true" checked="false" clickable="true" enabled="true" focusable="true" focused="false" scrollable="false" long-clickable="false" password="false" selected="false" visible-to-user="true" bounds="[44,400][1036,532]" />
    <node index="4" text="Book plot 14" resource-id="org.fernwick.allotments:id/book" class="android.widget.Button" package="org.fernwick.allotments" content-desc="" checkable="false" checked="false" clickable="true" enabled="true" focusable="true" focused="false" scrollable="false" long-clickable="false" password="false" selected="false" visible-to-user="true" bounds="[44,2156][1036,2310]" />
  </node>
</hierarchy>
"""

IOS_SOURCE = """<?xml version="1.0" encoding="UTF-8"?>
<AppiumAUT>
  <XCUIElementTypeApplication type="XCUIElementTypeApplication" name="Fernwick" label="Fernwick" enabled="true" visible="true" accessible="false" x="0" y="0" width="390" height="844" index="0">
    <XCUIElementTypeWindow type="XCUIElementTypeWindow" enabled="true" visible="true" accessible="false" x="0" y="0" width="390" height="844" index="0">
      <XCUIElementTypeNavigationBar type="XCUIElementTypeNavigationBar" label="Water rota" enabled="true" visible="true" accessible="true" x="0" y="47" width="390" height="44" index="0"/>
      <XCUIElementTypeButton type="XCUIElementTypeButton" name="back" label="Back" enabled="true" visible="true" accessible="true" x="8" y="47" width="44" height="44" index="1"/>
      <XCUIElementTypeCell type="XCUIElementTypeCell" name="rota_monday" label="Monday, plots 1 to 6" enabled="true" visible="true" accessible="true" x="0" y="100" width="390" height="60" index="2"/>
      <XCUIElementTypeButton type="XCUIElementTypeButton" name="swap_shift" label="Swap shift" enabled="true" visible="true" accessible="true" x="330" y="170" width="24" height="24" index="3"/>
      <XCUIElementTypeSwitch type="XCUIElementTypeSwitch" name="remind_me" label="Remind me" enabled="true" visible="true" accessible="true" x="323" y="220" width="51" height="31" index="4"/>
      <XCUIElementTypeButton type="XCUIElementTypeButton" name="sign_up" label="Sign up" enabled="true" visible="true" accessible="true" x="16" y="700" width="358" height="50" index="5"/>
    </XCUIElementTypeWindow>
  </XCUIElementTypeApplication>
</AppiumAUT>
"""

# HTTP status of each W3C error code used here: the "Errors" table (re-read).
STATUS = {"invalid session id": 404, "unknown command": 404, "unknown method": 405, "unable to capture screen": 500}


def png_bytes(size: tuple[int, int]) -> bytes:
    buf = io.BytesIO()
    Image.new("RGB", size, (236, 241, 230)).save(buf, format="PNG")
    return buf.getvalue()


@dataclass
class Remote:
    """What the stand-in remote end serves, and every request it saw (method, path, headers)."""

    source: str
    png: bytes
    rect: dict[str, Any]
    redirect_source_to: str | None = None
    fail: dict[str, tuple[int, bytes]] = field(default_factory=dict)  # command -> raw (status, body)
    seen: list[tuple[str, str, dict[str, str]]] = field(default_factory=list)
    url: str = ""

    def data(self, command: str) -> Any:
        if command == "source":
            return self.source
        if command == "screenshot":
            return base64.b64encode(self.png).decode("ascii")
        return self.rect


COMMANDS = ("source", "screenshot", "window/rect")


class Handler(BaseHTTPRequestHandler):
    server: Any

    def log_message(self, format: str, *args: Any) -> None:
        pass

    def _send(self, status: int, payload: Any, raw: bytes | None = None) -> None:
        body = raw if raw is not None else json.dumps({"value": payload}).encode("utf-8")
        self.send_response(status)
        self.send_header("Content-Type", "application/json; charset=utf-8")
        self.send_header("Cache-Control", "no-cache")
        self.send_header("Content-Length", str(len(body)))
        self.end_headers()
        self.wfile.write(body)

    def _error(self, code: str, message: str) -> None:
        self._send(STATUS[code], {"error": code, "message": message, "stacktrace": "at stand-in remote end"})

    def _route(self, method: str) -> None:
        remote: Remote = self.server.remote
        remote.seen.append((method, self.path, dict(self.headers.items())))
        path, _, query = self.path.partition("?")
        parts = path.split("/", 3)  # "", "session", id, command
        if len(parts) != 4 or parts[1] != "session" or parts[3] not in COMMANDS:
            return self._error("unknown command", f"no endpoint matches {self.path}")
        if method != "GET":
            return self._error("unknown method", f"{method} is not allowed on {self.path}")
        if parts[2] != SESSION:
            return self._error("invalid session id", f"No active session with ID {parts[2]}")
        command = parts[3]
        if command == "source" and remote.redirect_source_to and query != "moved":
            self.send_response(302)
            self.send_header("Location", remote.redirect_source_to)
            self.send_header("Content-Length", "0")
            self.end_headers()
            return None
        if command in remote.fail:
            status, raw = remote.fail[command]
            return self._send(status, None, raw)
        return self._send(200, remote.data(command))

    def do_GET(self) -> None:
        self._route("GET")

    def do_POST(self) -> None:
        self._route("POST")


@pytest.fixture
def serve() -> Iterator[Any]:
    """Start stand-in remote ends on 127.0.0.1; each is shut down and joined when the test ends."""
    running: list[tuple[ThreadingHTTPServer, threading.Thread]] = []

    def start(remote: Remote) -> Remote:
        server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        server.daemon_threads = True
        server.remote = server_remote = remote  # type: ignore[attr-defined]
        thread = threading.Thread(target=server.serve_forever, kwargs={"poll_interval": 0.05}, daemon=True)
        thread.start()
        running.append((server, thread))
        server_remote.url = f"http://127.0.0.1:{server.server_address[1]}/session/{SESSION}"
        return server_remote

    yield start
    for server, thread in running:
        server.shutdown()
        server.server_close()
        thread.join(timeout=10)


def ios_remote(**kw: Any) -> Remote:
    return Remote(IOS_SOURCE, png_bytes((1170, 2532)), {"x": 0, "y": 0, "width": 390, "height": 844}, **kw)


def android_remote(**kw: Any) -> Remote:
    return Remote(ANDROID_SOURCE, png_bytes((1080, 2400)), {"x": 0, "y": 0, "width": 1080, "height": 2400}, **kw)


def run(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    code = main(list(args))
    out, err = capsys.readouterr()
    return code, out, err


def test_ios_bundle_records_the_scale_and_checks(serve: Any, tmp_path: Path,
                                                 capsys: pytest.CaptureFixture[str]) -> None:
    remote = serve(ios_remote())
    code, out, err = run(capsys, "capture", "water_rota", "--webdriver", remote.url, "--out", str(tmp_path))
    assert code == 0, err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["water_rota.device.txt", "water_rota.png", "water_rota.xml"]
    # Exactly the three standard GETs, each on the session's own path.
    assert [(m, p) for m, p, _ in remote.seen] == [("GET", f"/session/{SESSION}/{c}") for c in COMMANDS]
    assert (tmp_path / "water_rota.xml").read_text("utf-8") == IOS_SOURCE
    assert (tmp_path / "water_rota.png").read_bytes() == remote.png  # the Base64 decoded, byte for byte
    # The scale is screenshot width in pixels / window width in points; the width read here by
    # Pillow (a general image library), not by tapgauge.
    with Image.open(tmp_path / "water_rota.png") as img:
        expected = img.width / remote.rect["width"]
    assert expected == 3.0
    sidecar = (tmp_path / "water_rota.device.txt").read_text("utf-8")
    assert "scale: 3 " in sidecar and "ppi" in sidecar  # and says ppi is not known
    assert "scale 3" in out and "check it with: tapgauge check" in out

    code, out, err = run(capsys, "check", str(tmp_path / "water_rota.xml"), "-f", "json")
    assert code in (0, 1), err  # 1: the 24 pt 'Swap shift' button is below the minimums
    screen = json.loads(out)["screens"][0]
    assert (screen["platform"], screen["device"]["scale"]) == ("ios", expected)
    assert screen["device"]["scale_source"] == "sidecar water_rota.device.txt"
    swap = next(t for t in screen["targets"] if t["label"] == "Swap shift")
    assert swap["size"] == {"width": 24.0, "height": 24.0}  # points, as the page source gave them


def test_android_bundle_says_density_is_unknown_and_check_needs_it(serve: Any, tmp_path: Path,
                                                                    capsys: pytest.CaptureFixture[str]) -> None:
    remote = serve(android_remote())
    code, out, err = run(capsys, "capture", "book_plot", "--webdriver", remote.url, "--out", str(tmp_path))
    assert code == 0, err
    # No sidecar: nothing in it would be usable, and check refuses a sidecar that says nothing usable.
    assert sorted(p.name for p in tmp_path.iterdir()) == ["book_plot.png", "book_plot.xml"]
    said = " ".join(out.split())
    assert "density is not known" in said and "does not guess" in said
    assert f"check it with: tapgauge check {tmp_path / 'book_plot.xml'} --density DPI" in said

    xml = str(tmp_path / "book_plot.xml")
    code, out, err = run(capsys, "check", xml)
    assert code == 2 and "no screen density" in err

    code, out, err = run(capsys, "check", xml, "--density", "440", "-f", "json")
    assert code in (0, 1), err
    screen = json.loads(out)["screens"][0]
    assert screen["device"]["density_dpi"] == 440.0
    back = next(t for t in screen["targets"] if t["label"] == "Back")
    # dp = px * 160 / dpi (Android's baseline density, developer.android.com "Support different
    # pixel densities", from memory): 132 px at 440 dpi.
    assert back["size"]["width"] == pytest.approx(132 * 160 / 440, abs=0.01)

    (tmp_path / "book_plot.device.txt").write_text("density: 440\n")  # the other way the message offers
    code, out, err = run(capsys, "check", xml)
    assert code in (0, 1), err


def test_unknown_session_is_a_clear_error(serve: Any, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    remote = serve(ios_remote())
    wrong = remote.url.replace(SESSION, "ended-session-7")
    code, _out, err = run(capsys, "capture", "x", "--webdriver", wrong, "--out", str(tmp_path / "o"))
    assert code == 2
    said = " ".join(err.split())
    assert f"GET {wrong}/source" in said and "HTTP 404" in said
    assert "invalid session id: No active session with ID ended-session-7" in said
    assert "Traceback" not in err and not (tmp_path / "o").exists()


@pytest.mark.parametrize(("command", "status", "body", "expect"), [
    ("screenshot", 500, json.dumps({"value": {"error": "unable to capture screen", "message": "secure layer",
                                              "stacktrace": ""}}).encode(), "HTTP 500, unable to capture screen"),
    ("window/rect", 502, b"<html>bad gateway</html>", "HTTP 502, not a WebDriver error"),
    ("source", 200, b'{"value": 42}', "expected the page source as a string"),
    ("screenshot", 200, b'{"value": "bm90IGEgcG5n"}', "the screenshot is not a PNG"),
    ("window/rect", 200, b'{"value": {"x": 0, "y": 0}}', "expected \"value\" to be a window rect"),
    ("source", 200, b"no json here", "not a WebDriver answer"),
])
def test_bad_answers_are_clear_errors(serve: Any, tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                      command: str, status: int, body: bytes, expect: str) -> None:
    remote = serve(ios_remote(fail={command: (status, body)}))
    code, _out, err = run(capsys, "capture", "x", "--webdriver", remote.url, "--out", str(tmp_path / "o"))
    assert code == 2
    said = " ".join(err.split())
    assert f"GET {remote.url}/{command}" in said and expect in said
    assert "Traceback" not in err and not (tmp_path / "o").exists()


def test_a_web_page_is_not_taken_for_a_screen(serve: Any, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    remote = serve(Remote("<html><body><button>Book</button></body></html>", png_bytes((10, 10)),
                          {"x": 0, "y": 0, "width": 10, "height": 10}))
    code, _out, err = run(capsys, "capture", "x", "--webdriver", remote.url, "--out", str(tmp_path / "o"))
    assert code == 2 and "root is <html>" in err and "web view" in err


def test_a_server_that_never_answers_times_out(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # Listens but never accepts: the connection completes in the backlog, and no answer comes.
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as silent:
        silent.bind(("127.0.0.1", 0))
        silent.listen(1)
        url = f"http://127.0.0.1:{silent.getsockname()[1]}/session/{SESSION}"
        code, _out, err = run(capsys, "capture", "x", "--webdriver", url, "--timeout", "0.3",
                             "--out", str(tmp_path / "o"))
    assert code == 2
    said = " ".join(err.split())
    assert f"GET {url}/source: no answer within 0.3 s (--timeout)" in said
    assert not (tmp_path / "o").exists()


def test_nothing_listening_is_a_clear_error(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    with socket.socket() as s:  # a port that was free a moment ago, now closed
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    url = f"http://127.0.0.1:{port}/session/{SESSION}"
    code, _out, err = run(capsys, "capture", "x", "--webdriver", url, "--out", str(tmp_path))
    assert code == 2 and "could not connect" in err and url in " ".join(err.split())


def test_a_redirect_to_another_host_is_not_followed(serve: Any, tmp_path: Path,
                                                    capsys: pytest.CaptureFixture[str]) -> None:
    elsewhere = serve(ios_remote())  # another origin: same address, another port
    remote = serve(ios_remote(redirect_source_to=f"{elsewhere.url}/source"))
    code, _out, err = run(capsys, "capture", "x", "--webdriver", remote.url, "--out", str(tmp_path / "o"))
    assert code == 2
    said = " ".join(err.split())
    assert "redirected (HTTP 302)" in said and "not followed" in said
    assert elsewhere.seen == []  # never contacted
    assert not (tmp_path / "o").exists()


def test_a_redirect_within_the_same_host_is_followed(serve: Any, tmp_path: Path,
                                                     capsys: pytest.CaptureFixture[str]) -> None:
    remote = serve(ios_remote())
    remote.redirect_source_to = f"{remote.url}/source?moved"  # same scheme, host and port
    code, _out, err = run(capsys, "capture", "x", "--webdriver", remote.url, "--out", str(tmp_path))
    assert code == 0, err
    assert [p for _, p, _ in remote.seen][:2] == [f"/session/{SESSION}/source", f"/session/{SESSION}/source?moved"]


@pytest.mark.parametrize("url", [
    "file:///etc/passwd",
    "ftp://127.0.0.1/session/abc",
    "127.0.0.1:4723/session/abc",  # no scheme
    "http://127.0.0.1:4723/status",  # not a session
    "http://127.0.0.1:4723/session/abc?x=1",
])
def test_urls_that_are_not_http_sessions_are_refused(url: str, tmp_path: Path,
                                                     capsys: pytest.CaptureFixture[str]) -> None:
    code, _out, err = run(capsys, "capture", "x", "--webdriver", url, "--out", str(tmp_path / "o"))
    assert code == 2
    assert "http://127.0.0.1:4723/session/SESSION_ID" in err  # says what is expected
    assert not (tmp_path / "o").exists()


def test_existing_files_are_replaced_only_with_force(serve: Any, tmp_path: Path,
                                                     capsys: pytest.CaptureFixture[str]) -> None:
    remote = serve(ios_remote())
    (tmp_path / "rota.xml").write_text("mine")
    code, _out, err = run(capsys, "capture", "rota", "--webdriver", remote.url, "--out", str(tmp_path))
    assert code == 2 and "--force" in err
    assert (tmp_path / "rota.xml").read_text() == "mine" and remote.seen == []  # refused before asking
    code, _out, err = run(capsys, "capture", "rota", "--webdriver", remote.url, "--out", str(tmp_path), "--force")
    assert code == 0, err
    assert (tmp_path / "rota.xml").read_text("utf-8") == IOS_SOURCE
    assert not list(tmp_path.glob("*.tmp*")) and not list(tmp_path.glob(".*"))  # no temporary files left


def test_force_keeps_a_sidecar_it_has_nothing_to_replace_with(serve: Any, tmp_path: Path,
                                                              capsys: pytest.CaptureFixture[str]) -> None:
    remote = serve(android_remote())
    (tmp_path / "book.device.txt").write_text("density: 440\n")
    code, out, err = run(capsys, "capture", "book", "--webdriver", remote.url, "--out", str(tmp_path), "--force")
    assert code == 0, err
    assert (tmp_path / "book.device.txt").read_text() == "density: 440\n"
    assert "kept the existing" in " ".join(out.split())
    assert run(capsys, "check", str(tmp_path / "book.xml"))[0] in (0, 1)


def test_webdriver_and_serial_together_is_a_usage_error(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, _out, err = run(capsys, "capture", "x", "--webdriver", f"http://127.0.0.1:9/session/{SESSION}",
                          "--serial", "SER123", "--out", str(tmp_path))
    assert code == 2 and "cannot be used together" in err and list(tmp_path.iterdir()) == []
    code, _out, err = run(capsys, "capture", "x", "--timeout", "5", "--out", str(tmp_path))
    assert code == 2 and "--webdriver" in err


def test_credentials_in_the_url_are_sent_to_that_host_and_written_nowhere(serve: Any, tmp_path: Path,
                                                                           capsys: pytest.CaptureFixture[str]) -> None:
    remote = serve(ios_remote())
    secret_url = remote.url.replace("http://", "http://tester:pl0t-s3cret@")
    code, out, err = run(capsys, "capture", "rota", "--webdriver", secret_url, "--out", str(tmp_path))
    assert code == 0, err
    # HTTP Basic: "Basic " + Base64("user:password") (RFC 7617, section 2, from memory).
    expected = "Basic " + base64.b64encode(b"tester:pl0t-s3cret").decode()
    assert {h.get("Authorization") for _, _, h in remote.seen} == {expected}
    written = b"".join(p.read_bytes() for p in tmp_path.iterdir())
    assert b"s3cret" not in written and "s3cret" not in out + err


def test_a_window_rect_not_in_points_records_no_scale(serve: Any, tmp_path: Path,
                                                      capsys: pytest.CaptureFixture[str]) -> None:
    # A rect as wide as the screenshot in pixels (as a browser's CSS pixels at zoom 1 might be):
    # not the element tree's 390 pt, so the assumption that it is points does not hold.
    remote = serve(ios_remote())
    remote.rect = {"x": 0, "y": 0, "width": 1170, "height": 2532}
    code, out, err = run(capsys, "capture", "rota", "--webdriver", remote.url, "--out", str(tmp_path))
    assert code == 0, err
    assert not (tmp_path / "rota.device.txt").exists()
    assert "not in points" in " ".join(out.split())
    code, out, err = run(capsys, "check", str(tmp_path / "rota.xml"), "-f", "json")
    assert code in (0, 1), err
    device = json.loads(out)["screens"][0]["device"]
    assert (device["scale"], device["scale_source"]) == (3.0, "screenshot rota.png width")


@pytest.mark.parametrize(("rect", "png", "tree", "scale"), [
    # UIScreen.scale is 1, 2 or 3 (Apple Developer Documentation, UIScreen.scale, from memory).
    (Rect(0, 0, 390, 844), (1170, 2532), 390.0, 3.0),
    (Rect(0, 0, 390, 844), (2532, 1170), 390.0, 3.0),  # screenshot saved turned a quarter
    (Rect(0, 0, 414, 896), (828, 1792), None, 2.0),
    (Rect(0, 0, 390, 844), (1171, 2532), 390.0, 3.0),  # one pixel of rounding: still 3
    (Rect(0, 0, 390, 844), (1000, 1000), 390.0, None),  # not one scale across both sides
    (Rect(0, 0, 1170, 2532), (1170, 2532), 390.0, None),  # the rect is not in points
])
def test_ios_scale(rect: Rect, png: tuple[int, int], tree: float | None, scale: float | None) -> None:
    assert ios_scale(rect, png, tree)[0] == scale


def test_proxies_from_the_environment_are_not_used(serve: Any, tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                   capsys: pytest.CaptureFixture[str]) -> None:
    proxy = serve(ios_remote())  # would see the requests if they went through a proxy
    remote = serve(ios_remote())
    for var in ("http_proxy", "HTTP_PROXY", "https_proxy", "all_proxy"):
        monkeypatch.setenv(var, proxy.url.split("/session")[0])
    for var in ("no_proxy", "NO_PROXY"):
        monkeypatch.delenv(var, raising=False)
    code, _out, err = run(capsys, "capture", "rota", "--webdriver", remote.url, "--out", str(tmp_path))
    assert code == 0, err
    assert proxy.seen == [] and len(remote.seen) == 3
