"""A minimal W3C WebDriver client: three GET commands of one session, nothing else.

Wording from the W3C WebDriver editor's draft (w3c/webdriver index.bs, re-read):
- "Processing model" (send a response): a success is HTTP 200 with a JSON object whose
  "value" holds the command's data; the body is UTF-8.
- "Errors": an error is an HTTP status in the 4xx or 5xx range with a JSON body whose
  "value" is an object with "error" (the error code), "message" and "stacktrace".
- "Routing requests": a remote end may put a URL prefix before /session (such as /wd),
  so a session URL is anything ending in /session/{session id}.

Only the session URL's own scheme, host and port are contacted: proxies named in the
environment are not used, and a redirect to any other origin is refused, not followed.
"""

from __future__ import annotations

import base64
import json
import time
import urllib.error
import urllib.parse
import urllib.request
from dataclasses import dataclass
from http.client import HTTPException
from typing import Any, BinaryIO

from tapgauge import __version__
from tapgauge.capture import CaptureError

SCHEMES = {"http": 80, "https": 443}
DEFAULT_TIMEOUT_S = 30.0
# Common practice: bounds memory. A large tablet screenshot in Base64 is tens of MB.
MAX_ANSWER_BYTES = 256 * 1024 * 1024
EXAMPLE = "http://127.0.0.1:4723/session/SESSION_ID"

# What to do about the errors a capture meets most, by W3C error code ("Errors" table).
ERROR_ADVICE = {
    "invalid session id": "the session has ended or the id is wrong; pass the URL of a running session",
    "no such window": "the app's window is gone; bring the app to the front and capture again",
    "unable to capture screen": "the device would not give a screenshot (a secure screen, or the display off?)",
    "unexpected alert open": "an alert is open on the device; dismiss it and capture again",
    "unknown command": "this server does not offer this standard command",
}

Origin = tuple[str, str, int]


@dataclass(frozen=True)
class Session:
    url: str  # scheme://host[:port][/prefix]/session/{id}, without credentials
    origin: Origin
    authorization: str | None = None  # Basic, from user:password in the URL given


def _origin(parts: urllib.parse.SplitResult) -> Origin:
    scheme = parts.scheme.lower()
    return scheme, (parts.hostname or "").lower(), parts.port or SCHEMES.get(scheme, 0)


def parse_session_url(text: str) -> Session:
    """The session a --webdriver URL names; a CaptureError, with an example, for anything else."""
    try:
        parts = urllib.parse.urlsplit(text.strip())
        parts.port  # noqa: B018 - raises ValueError for a port that is not a number
    except ValueError as exc:
        raise CaptureError(f"--webdriver {text!r} is not a URL ({exc}); expected one such as {EXAMPLE}") from None
    if parts.scheme.lower() not in SCHEMES:
        raise CaptureError(f"--webdriver {text!r}: only http:// and https:// session URLs are read; expected one "
                           f"such as {EXAMPLE}")
    segments = parts.path.rstrip("/").split("/")
    if not parts.hostname or len(segments) < 3 or segments[-2] != "session" or not segments[-1]:
        raise CaptureError(f"--webdriver {text!r} does not name a session; expected a URL ending in "
                           f"/session/SESSION_ID, such as {EXAMPLE}")
    if parts.query or parts.fragment:
        raise CaptureError(f"--webdriver {text!r}: a session URL has no '?' or '#' part; expected one such as {EXAMPLE}")
    host = parts.hostname if ":" not in parts.hostname else f"[{parts.hostname}]"
    netloc = host + (f":{parts.port}" if parts.port else "")
    authorization = None
    if parts.username is not None:
        pair = f"{urllib.parse.unquote(parts.username)}:{urllib.parse.unquote(parts.password or '')}"
        authorization = "Basic " + base64.b64encode(pair.encode("utf-8")).decode("ascii")
    url = urllib.parse.urlunsplit((parts.scheme.lower(), netloc, parts.path.rstrip("/"), "", ""))
    return Session(url=url, origin=_origin(parts), authorization=authorization)


class _SameOriginRedirects(urllib.request.HTTPRedirectHandler):
    """Follows a redirect only within the session URL's origin; any other is an error."""

    def __init__(self, origin: Origin) -> None:
        self.origin = origin

    def redirect_request(self, req: urllib.request.Request, fp: BinaryIO, code: int, msg: str,
                         headers: Any, newurl: str) -> urllib.request.Request | None:
        if _origin(urllib.parse.urlsplit(newurl)) != self.origin:
            fp.close()
            raise CaptureError(f"GET {req.full_url}: the server redirected (HTTP {code}) to {_shown(newurl)}, "
                               "another host; capture contacts only the session URL's host and port, so it was "
                               "not followed")
        return super().redirect_request(req, fp, code, msg, headers, newurl)


def _shown(url: str) -> str:
    """A URL as messages print it: without any user name or password."""
    parts = urllib.parse.urlsplit(url)
    return urllib.parse.urlunsplit(parts._replace(netloc=parts.netloc.rpartition("@")[2]))


def _read(answer: BinaryIO, url: str, deadline: float) -> bytes:
    chunks, size = [], 0
    while chunk := answer.read(64 * 1024):
        size += len(chunk)
        if size > MAX_ANSWER_BYTES:
            raise CaptureError(f"GET {url}: the answer is larger than {MAX_ANSWER_BYTES // 2**20} MB; "
                               "is this a WebDriver server?")
        if time.monotonic() > deadline:
            raise TimeoutError
        chunks.append(chunk)
    return b"".join(chunks)


def _json(body: bytes) -> Any:
    try:
        return json.loads(body.decode("utf-8"))
    except (UnicodeDecodeError, ValueError, RecursionError):
        return None


def _error_said(data: Any) -> str | None:
    """'code: message (advice)' from a W3C error body, or from the older wire protocol's non-zero
    "status" (from memory); None when `data` is not an error body."""
    if not isinstance(data, dict):
        return None
    value = data.get("value")
    legacy = isinstance(data.get("status"), int) and not isinstance(data.get("status"), bool) and data["status"] != 0
    if not (isinstance(value, dict) and "error" in value) and not legacy:
        return None
    inner = value if isinstance(value, dict) else {}
    code = str(inner.get("error") or f"status {data.get('status')}")
    message = " ".join(str(inner.get("message") or "").split())[:300]  # the stacktrace is left out: long, not for users
    advice = ERROR_ADVICE.get(code)
    return f"{code}" + (f": {message}" if message else "") + (f" ({advice})" if advice else "")


def get_value(session: Session, command: str, timeout: float) -> Any:
    """The "value" of GET {session}/{command}; a CaptureError naming the URL and what happened."""
    url = f"{session.url}/{command}"
    headers = {"Accept": "application/json", "User-Agent": f"tapgauge/{__version__}"}
    if session.authorization:
        headers["Authorization"] = session.authorization
    opener = urllib.request.build_opener(urllib.request.ProxyHandler({}), _SameOriginRedirects(session.origin))
    deadline = time.monotonic() + timeout
    try:
        try:
            with opener.open(urllib.request.Request(url, headers=headers), timeout=timeout) as answer:
                status, body = answer.status, _read(answer, url, deadline)
        except urllib.error.HTTPError as exc:  # 4xx/5xx: the body says which error
            with exc:
                status, body = exc.code, _read(exc, url, deadline)
    except TimeoutError:
        raise CaptureError(f"GET {url}: no answer within {timeout:g} s (--timeout); is the automation server "
                           "running and the device awake?") from None
    except urllib.error.URLError as exc:
        if isinstance(exc.reason, TimeoutError):
            raise CaptureError(f"GET {url}: no answer within {timeout:g} s (--timeout); is the automation server "
                               "running?") from None
        raise CaptureError(f"GET {url}: could not connect ({exc.reason}); is the automation server running "
                           "at that address?") from None
    except (HTTPException, OSError) as exc:
        raise CaptureError(f"GET {url}: the connection failed ({exc or type(exc).__name__})") from None
    data = _json(body)
    said = _error_said(data)
    if status >= 300 or said:
        what = said or f"not a WebDriver error; the body starts {body[:120].decode('utf-8', 'replace')!r}"
        raise CaptureError(f"GET {url}: HTTP {status}, {what}")
    if not isinstance(data, dict) or "value" not in data:
        raise CaptureError(f"GET {url}: HTTP {status} but not a WebDriver answer (a JSON object with \"value\"); "
                           f"the body starts {body[:120].decode('utf-8', 'replace')!r}")
    return data["value"]
