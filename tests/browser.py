"""Headless Chromium checks of exported pages, for the whole test-suite.

Every run starts Debian's ``chromium`` with a fresh profile, no sandbox (CI runs
as root), no GPU, and everything that would reach the network switched off;
host names resolve to nothing, so a page that asks for a remote file gets an
error instead of the file, and the request is still recorded.

The exported pages carry no script, so :func:`inspect_page` measures a
temporary copy with a small script added just before ``</body>`` and reads the
result back from ``--dump-dom``. Requests are taken from two places: the
page's Performance resource-timing entries and Chromium's own network log
(``--log-net-log``), which also records requests that failed.

Examples
--------
>>> from tests.browser import chromium_path
>>> chromium_path() is None or chromium_path().endswith("chromium")
True
"""

from __future__ import annotations

import base64
import json
import os
import re
import subprocess
import tempfile
import zlib
from dataclasses import dataclass
from pathlib import Path

import pytest

from calckit.render.printing import find_chromium

__all__ = [
    "ARTIFACTS",
    "PageReport",
    "chromium_path",
    "inspect_page",
    "needs_chromium",
    "pdf_page_count",
    "pdf_text",
    "print_layout",
    "print_pdf",
    "PrintLayout",
    "PAPERS",
    "screenshot",
]

ARTIFACTS = Path(__file__).resolve().parent / "_artifacts"
TIMEOUT_S = 90
_VIRTUAL_TIME_MS = 5000
_REPORT_ID = "calckit-page-report"
_SKIP_REASON = "Debian's chromium is not installed; .ci/run installs it"


def chromium_path() -> str | None:
    """Path of the Chromium binary, or None when it is not installed (the kit's own search,
    :func:`calckit.render.printing.find_chromium`; ``CALCKIT_CHROMIUM`` overrides it)."""
    return find_chromium()


needs_chromium = pytest.mark.skipif(chromium_path() is None, reason=_SKIP_REASON)
"""Mark a test (or a module, as ``pytestmark``) that needs Chromium."""


@dataclass(frozen=True)
class PageReport:
    """What a page looked like once Chromium had laid it out.

    Attributes
    ----------
    math_count : int
        Number of ``<math>`` elements.
    math_zero_size : int
        How many of them have a laid-out box of zero width or height.
    fraction_count, fractions_stacked : int
        ``<mfrac>`` elements, and how many have the numerator above the
        denominator.
    subscript_count, subscripts_lowered : int
        ``<msub>`` elements, and how many have the script's baseline below the
        base's.
    requests : tuple of str
        URLs the page asked the network for, whether or not they loaded (from
        resource timing and Chromium's net log).
    references : tuple of str
        Addresses in the page that a browser would load (``src``, ``srcset``,
        ``<link href>``, ``<object data>``, SVG ``href``, CSS ``url()`` and
        ``@import``), local files included; ``data:`` URLs and links within
        the page are left out. ``<a href>`` links are not counted.
    document_height : float
        Height of the laid-out document in CSS pixels.
    """

    math_count: int
    math_zero_size: int
    fraction_count: int
    fractions_stacked: int
    subscript_count: int
    subscripts_lowered: int
    requests: tuple[str, ...]
    references: tuple[str, ...]
    document_height: float


_MEASURE_SCRIPT = """
<script>
function references() {
  // Addresses the page points at for loading (not <a href> links), resolved to absolute URLs.
  const found = [];
  const add = (value) => { if (value) found.push(new URL(value, document.baseURI).href); };
  document.querySelectorAll("[src]").forEach((e) => add(e.getAttribute("src")));
  document.querySelectorAll("link[href]").forEach((e) => add(e.getAttribute("href")));
  document.querySelectorAll("object[data]").forEach((e) => add(e.getAttribute("data")));
  document.querySelectorAll("[poster]").forEach((e) => add(e.getAttribute("poster")));
  document.querySelectorAll("[srcset]").forEach((e) => e.getAttribute("srcset").split(",")
      .forEach((part) => add(part.trim().split(/\\s+/)[0])));
  document.querySelectorAll("image, use, feImage").forEach((e) =>
      add(e.getAttribute("href") || e.getAttribute("xlink:href")));
  const css = Array.from(document.querySelectorAll("style")).map((e) => e.textContent)
      .concat(Array.from(document.querySelectorAll("[style]")).map((e) => e.getAttribute("style")));
  css.forEach((text) => {
    for (const m of text.matchAll(/url\\(\\s*['"]?([^'")]+)['"]?\\s*\\)|@import\\s+['"]([^'"]+)['"]/g)) {
      add(m[1] || m[2]);
    }
  });
  const page = document.baseURI.split("#")[0];
  return found.filter((u) => !u.startsWith("data:") && u.split("#")[0] !== page);
}
window.addEventListener("load", () => setTimeout(() => {
  const box = (e) => e.getBoundingClientRect();
  const maths = Array.from(document.getElementsByTagName("math"));
  const zero = maths.filter((m) => { const r = box(m); return !(r.width > 0 && r.height > 0); });
  const fracs = Array.from(document.getElementsByTagName("mfrac"));
  const stacked = fracs.filter((f) => f.children.length === 2
      && box(f.children[0]).bottom <= box(f.children[1]).top + 0.5);
  const subs = Array.from(document.getElementsByTagName("msub"));
  const lowered = subs.filter((s) => s.children.length === 2
      && box(s.children[1]).bottom > box(s.children[0]).bottom + 0.5);
  const report = {
    math_count: maths.length,
    math_zero_size: zero.length,
    fraction_count: fracs.length,
    fractions_stacked: stacked.length,
    subscript_count: subs.length,
    subscripts_lowered: lowered.length,
    requests: performance.getEntriesByType("resource").map((e) => e.name),
    references: references(),
    document_height: document.documentElement.scrollHeight,
  };
  const out = document.createElement("pre");
  out.id = "REPORT_ID";
  out.textContent = JSON.stringify(report);
  document.documentElement.appendChild(out);
}, 0));
</script>
""".replace("REPORT_ID", _REPORT_ID)


def _flags(profile: Path) -> list[str]:
    return [
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--no-default-browser-check",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--disable-extensions",
        "--disable-dev-shm-usage",
        "--hide-scrollbars",
        "--host-resolver-rules=MAP * ~NOTFOUND",
        f"--user-data-dir={profile}",
    ]


def _run(args: list[str], html_path: Path) -> subprocess.CompletedProcess[str]:
    """Run Chromium once on one file with a fresh profile; raise if it fails."""
    binary = chromium_path()
    if binary is None:
        pytest.skip(_SKIP_REASON)
    with tempfile.TemporaryDirectory(prefix="calckit-chromium-") as profile:
        command = [binary, *_flags(Path(profile)), *args, Path(html_path).resolve().as_uri()]
        result = subprocess.run(command, capture_output=True, text=True, timeout=TIMEOUT_S, check=False)
    if result.returncode != 0:
        raise RuntimeError(f"chromium exited with {result.returncode}: {result.stderr[-2000:]}")
    return result


def inspect_page(html_path: str | os.PathLike[str]) -> PageReport:
    """Lay the page out in Chromium and report on its math and its requests.

    Parameters
    ----------
    html_path : path
        An HTML file. It is not changed; a copy with a measuring script is
        loaded from the same folder, so relative references resolve the same.

    Returns
    -------
    PageReport
    """
    source = Path(html_path).resolve()
    text = source.read_text(encoding="utf-8")
    marker = text.lower().rfind("</body>")
    probe_text = text[:marker] + _MEASURE_SCRIPT + text[marker:] if marker >= 0 else text + _MEASURE_SCRIPT
    with tempfile.TemporaryDirectory(prefix="calckit-netlog-") as work:
        netlog = Path(work) / "net.json"
        probe = source.with_name(f".{source.stem}.probe{os.getpid()}.html")
        probe.write_text(probe_text, encoding="utf-8")
        try:
            result = _run(
                [f"--virtual-time-budget={_VIRTUAL_TIME_MS}", f"--log-net-log={netlog}", "--dump-dom"],
                probe,
            )
        finally:
            probe.unlink(missing_ok=True)
        logged = _netlog_urls(netlog)
    match = re.search(rf'<pre id="{_REPORT_ID}">(.*?)</pre>', result.stdout, re.DOTALL)
    if match is None:
        raise RuntimeError(f"the measuring script left no report; chromium said: {result.stderr[-2000:]}")
    data = json.loads(_unescape_html_text(match.group(1)))
    own = {probe.as_uri()}
    requested = [u for u in [*data["requests"], *logged] if u not in own and not u.startswith("data:")]
    return PageReport(
        math_count=data["math_count"],
        math_zero_size=data["math_zero_size"],
        fraction_count=data["fraction_count"],
        fractions_stacked=data["fractions_stacked"],
        subscript_count=data["subscript_count"],
        subscripts_lowered=data["subscripts_lowered"],
        requests=tuple(dict.fromkeys(requested)),
        references=tuple(dict.fromkeys(data["references"])),
        document_height=float(data["document_height"]),
    )


def _unescape_html_text(text: str) -> str:
    return text.replace("&lt;", "<").replace("&gt;", ">").replace("&quot;", '"').replace("&amp;", "&")


def _netlog_urls(netlog: Path) -> list[str]:
    """URLs the page asked for in a Chromium net log, including failed requests.

    Chromium's own background requests (time, update, account checks) have no
    initiating origin ("not an origin") and are left out.
    """
    if not netlog.is_file():
        return []
    raw = netlog.read_text(encoding="utf-8", errors="replace").rstrip()
    if not raw.endswith("}"):  # a log cut short ends inside the events list
        raw = raw.rstrip(",\n ") + "]}"
    log = json.loads(raw)
    start_job = log["constants"]["logEventTypes"]["URL_REQUEST_START_JOB"]
    urls = []
    for event in log.get("events", []):
        params = event.get("params") or {}
        url = params.get("url")
        if event.get("type") == start_job and url and params.get("initiator") != "not an origin":
            urls.append(url)
    return urls


def screenshot(
    html_path: str | os.PathLike[str], png_path: str | os.PathLike[str], width: int = 1000, height: int = 1400
) -> Path:
    """Write a PNG of the page's first ``width`` x ``height`` CSS pixels."""
    out = Path(png_path).resolve()
    out.parent.mkdir(parents=True, exist_ok=True)
    out.unlink(missing_ok=True)
    _run([f"--window-size={width},{height}", f"--screenshot={out}"], Path(html_path))
    if not out.is_file():
        raise RuntimeError(f"chromium wrote no screenshot at {out}")
    return out


def print_pdf(html_path: str | os.PathLike[str], pdf_path: str | os.PathLike[str]) -> Path:
    """Print the page to PDF as a reader would, without Chromium's own header and footer."""
    out = Path(pdf_path).resolve()
    out.parent.mkdir(parents=True, exist_ok=True)
    out.unlink(missing_ok=True)
    _run([f"--print-to-pdf={out}", "--no-pdf-header-footer"], Path(html_path))
    if not out.is_file():
        raise RuntimeError(f"chromium wrote no PDF at {out}")
    return out


def pdf_page_count(pdf_path: str | os.PathLike[str]) -> int:
    """Number of ``/Type /Page`` objects in a PDF (``/Pages`` tree nodes are not counted)."""
    data = Path(pdf_path).read_bytes()
    return len(re.findall(rb"/Type\s*/Page(?![A-Za-z])", data))


_OBJECT = re.compile(rb"(\d+) 0 obj\s*(.*?)endobj", re.DOTALL)
_STREAM = re.compile(rb"^(.*?)stream\r?\n(.*)\r?\nendstream", re.DOTALL)


def pdf_text(pdf_path: str | os.PathLike[str]) -> list[str]:
    """Text of each page of a PDF that Chromium printed, one string per page.

    Stdlib only, and only for Chromium's own output: uncompressed object
    tables, Flate-compressed content streams, and fonts with ``/ToUnicode``
    maps. Text runs on one baseline are joined; a new baseline starts a new
    line.
    """
    objects: dict[int, tuple[bytes, bytes | None]] = {}
    for match in _OBJECT.finditer(Path(pdf_path).read_bytes()):
        body = match.group(2)
        stream = _STREAM.match(body)
        if stream:
            head, data = stream.group(1), stream.group(2)
            if b"/FlateDecode" in head:
                data = zlib.decompress(data)
            objects[int(match.group(1))] = (head, data)
        else:
            objects[int(match.group(1))] = (body, None)

    def dictionary(number: int) -> bytes:
        return objects[number][0]

    def refs(text: bytes, key: bytes) -> list[int]:
        found = re.search(key + rb"\s*(\[[^\]]*\]|\d+ 0 R)", text)
        return [int(n) for n in re.findall(rb"(\d+) 0 R", found.group(1))] if found else []

    pages = []
    for _, (head, _stream) in sorted(objects.items()):
        if not re.search(rb"/Type\s*/Page(?![A-Za-z])", head):
            continue
        resources = head
        inline = re.search(rb"/Resources\s*(\d+) 0 R", head)
        if inline:
            resources = dictionary(int(inline.group(1)))
        fonts_ref = re.search(rb"/Font\s*(\d+) 0 R", resources)
        fonts_dict = dictionary(int(fonts_ref.group(1))) if fonts_ref else resources
        cmaps = {}
        for name, font in re.findall(rb"/(\w+)\s+(\d+) 0 R", fonts_dict.split(b"/Font", 1)[-1]):
            unicode_ref = refs(dictionary(int(font)), b"/ToUnicode") if int(font) in objects else []
            if unicode_ref:
                cmaps[name.decode()] = _read_cmap(objects[unicode_ref[0]][1] or b"")
        content = b"".join(objects[n][1] or b"" for n in refs(head, b"/Contents"))
        pages.append(_content_text(content.decode("latin-1"), cmaps))
    return pages


def _read_cmap(data: bytes) -> dict[int, str]:
    text = data.decode("latin-1")
    table: dict[int, str] = {}
    for block in re.findall(r"beginbfchar(.*?)endbfchar", text, re.DOTALL):
        for code, uni in re.findall(r"<([0-9A-Fa-f]+)>\s*<([0-9A-Fa-f]+)>", block):
            table[int(code, 16)] = bytes.fromhex(uni).decode("utf-16-be")
    for block in re.findall(r"beginbfrange(.*?)endbfrange", text, re.DOTALL):
        for lo, hi, start in re.findall(r"<([0-9A-Fa-f]+)>\s*<([0-9A-Fa-f]+)>\s*<([0-9A-Fa-f]+)>", block):
            first = bytes.fromhex(start).decode("utf-16-be")
            for offset, code in enumerate(range(int(lo, 16), int(hi, 16) + 1)):
                table[code] = first[:-1] + chr(ord(first[-1]) + offset)
    return table


def _content_text(content: str, cmaps: dict[str, dict[int, str]]) -> str:
    lines: list[str] = []
    current: list[str] = []
    font: dict[int, str] = {}
    baseline = None
    token = re.compile(r"/(\w+)\s+[\d.]+\s+Tf|([-\d.]+)\s+Tm|<([0-9A-Fa-f]*)>\s*Tj|\[(.*?)\]\s*TJ", re.DOTALL)
    for match in token.finditer(content):
        if match.group(1):
            font = cmaps.get(match.group(1), {})
        elif match.group(2):
            if baseline is not None and match.group(2) != baseline and current:
                lines.append("".join(current))
                current = []
            baseline = match.group(2)
        else:
            hexes = (
                [match.group(3)]
                if match.group(3) is not None
                else re.findall(r"<([0-9A-Fa-f]*)>", match.group(4))
            )
            for run in hexes:
                for i in range(0, len(run) - 3, 4):
                    current.append(font.get(int(run[i : i + 4], 16), "\ufffd"))
    if current:
        lines.append("".join(current))
    return "\n".join(lines)


# ---------------------------------------------------------------------------
# print layout, measured through the DevTools protocol on a pipe (stdlib only)

#: paper sizes in millimetres (ISO 216 A4; ANSI Letter, 8.5 in x 11 in)
PAPERS = {"A4": (210.0, 297.0), "Letter": (215.9, 279.4)}
_CSS_PX_PER_MM = 96 / 25.4


@dataclass(frozen=True)
class PrintLayout:
    """A page laid out for print on one paper size, and the PDF Chromium printed from it.

    Attributes
    ----------
    printable_px : float
        Width between the page's left and right ``@page`` margins, in CSS pixels.
    maths : tuple of dict
        Per ``<math>`` element: ``left`` and ``right`` of the box its content covers
        (the union of its tokens' boxes: mi, mn, mo, mtext, ms), and the first characters of its text.
    text : str
        ``document.body.innerText`` in print media.
    pdf : bytes
        The page printed to PDF on that paper.
    tables : tuple of dict
        Per ``<table>``: ``left`` and ``right`` (the furthest right edge of the table or of
        any cell's content, so a cell whose text overflows it counts), and its first characters.
    """

    printable_px: float
    maths: tuple[dict, ...]
    text: str
    pdf: bytes
    tables: tuple[dict, ...] = ()


_LAYOUT_SCRIPT = """(() => { const out = []; const tables = [];
  for (const t of document.getElementsByTagName("table")) {
    const r = t.getBoundingClientRect();
    let right = r.right;
    for (const c of t.querySelectorAll("th, td")) {
      right = Math.max(right, c.getBoundingClientRect().right, c.getBoundingClientRect().left + c.scrollWidth);
    }
    tables.push({left: r.left, right: right, text: t.innerText.slice(0, 120)});
  }
  for (const m of document.getElementsByTagName("math")) {
    let left = Infinity, right = -Infinity;
    for (const e of m.querySelectorAll("mi, mn, mo, mtext, ms")) {
      const r = e.getBoundingClientRect();
      if (r.width > 0) { left = Math.min(left, r.left); right = Math.max(right, r.right); }
    }
    if (right > left) out.push({left: left, right: right, text: m.textContent.slice(0, 120)});
  }
  return {maths: out, tables: tables, text: document.body.innerText}; })()"""


class _DevTools:
    """Chromium driven over ``--remote-debugging-pipe`` (fd 3 in, fd 4 out, NUL-separated JSON)."""

    def __init__(self, binary: str, profile: Path):
        into_child, self._send = os.pipe()
        self._receive, from_child = os.pipe()

        def wire() -> None:  # in the child: the pipe ends become fds 3 and 4
            a, b = os.dup(into_child), os.dup(from_child)
            os.dup2(a, 3)
            os.dup2(b, 4)

        self.process = subprocess.Popen(
            [binary, *_flags(profile), "--remote-debugging-pipe", "about:blank"],
            preexec_fn=wire,
            close_fds=False,
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
        )
        os.close(into_child)
        os.close(from_child)
        self._id = 0
        self._buffer = b""
        self._events: list[dict] = []
        target = self.call("Target.createTarget", url="about:blank")["targetId"]
        self.session = self.call("Target.attachToTarget", targetId=target, flatten=True)["sessionId"]
        self.call("Page.enable", on_page=True)

    def _message(self) -> dict:
        while b"\0" not in self._buffer:
            chunk = os.read(self._receive, 1 << 20)
            if not chunk:
                raise RuntimeError("chromium closed the DevTools pipe")
            self._buffer += chunk
        raw, self._buffer = self._buffer.split(b"\0", 1)
        return json.loads(raw)

    def call(self, method: str, on_page: bool = False, **params) -> dict:
        self._id += 1
        message: dict = {"id": self._id, "method": method, "params": params}
        if on_page:
            message["sessionId"] = self.session
        os.write(self._send, json.dumps(message).encode() + b"\0")
        while True:
            reply = self._message()
            if reply.get("id") == self._id:
                if "error" in reply:
                    raise RuntimeError(f"{method}: {reply['error']}")
                return reply["result"]
            self._events.append(reply)

    def wait_for(self, event: str) -> None:
        while not any(e.get("method") == event for e in self._events):
            self._events.append(self._message())
        self._events.clear()

    def close(self) -> None:
        try:
            self.call("Browser.close")
        except (RuntimeError, OSError):
            pass
        try:
            self.process.wait(TIMEOUT_S)
        finally:
            os.close(self._send)
            os.close(self._receive)


def print_layout(
    html_path: str | os.PathLike[str], paper: str, margins_mm: tuple[float, float] = (18.0, 16.0)
) -> PrintLayout:
    """Lay the page out in print media at the printable width of *paper*, measure every
    ``<math>`` box, and print it to PDF on that paper.

    *margins_mm* are the page's left and right ``@page`` margins (the sheet's stylesheet,
    :data:`calckit.render.page.SHEET_CSS`, uses 18 mm and 16 mm).
    """
    binary = chromium_path()
    if binary is None:
        pytest.skip(_SKIP_REASON)
    width_mm, height_mm = PAPERS[paper]
    printable = (width_mm - sum(margins_mm)) * _CSS_PX_PER_MM
    with tempfile.TemporaryDirectory(prefix="calckit-devtools-") as profile:
        tools = _DevTools(binary, Path(profile))
        try:
            tools.call(
                "Emulation.setDeviceMetricsOverride",
                on_page=True,
                width=int(printable),
                height=1200,
                deviceScaleFactor=1,
                mobile=False,
            )
            tools.call("Emulation.setEmulatedMedia", on_page=True, media="print")
            tools.call("Page.navigate", on_page=True, url=Path(html_path).resolve().as_uri())
            tools.wait_for("Page.loadEventFired")
            found = tools.call(
                "Runtime.evaluate", on_page=True, expression=_LAYOUT_SCRIPT, returnByValue=True
            )
            value = found["result"]["value"]
            printed = tools.call(
                "Page.printToPDF",
                on_page=True,
                paperWidth=width_mm / 25.4,
                paperHeight=height_mm / 25.4,
                displayHeaderFooter=False,
            )
        finally:
            tools.close()
    return PrintLayout(
        printable,
        tuple(value["maths"]),
        value["text"],
        base64.b64decode(printed["data"]),
        tuple(value["tables"]),
    )
