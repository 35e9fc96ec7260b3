"""report.html: infer/reporting/html.py on its own, and the pages of the three commands in a
real headless browser (Debian's ``chromium``).

References (named again beside each check):

* the PNG signature and the IHDR chunk, width and height as big-endian 32-bit integers at
  bytes 16-24 (W3C 2003, Portable Network Graphics Specification, 5.2 and 11.2.2);
* base64 (RFC 4648, 2006), decoded with Python's ``base64``;
* an HTML document is read back with Python's ``html.parser`` (an independent parser);
* ``HTMLImageElement.naturalWidth`` is 0 unless the image was decoded (WHATWG HTML Living
  Standard, "The img element");
* every page of a PDF is a page object ``/Type /Page``, the page-tree nodes are
  ``/Type /Pages`` (ISO 32000-1:2008, PDF 1.7, 7.7.3);
* 1 CSS px = 1/96 in, 1 pt = 1/72 in (W3C CSS Values and Units Level 3, absolute lengths);
  A4 is 210 x 297 mm (ISO 216), US Letter 8.5 x 11 in (common practice).
"""

from __future__ import annotations

import base64
import json
import math
import os
import re
import shutil
import struct
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import pytest

from conftest import DEMO, run_qhat
from infer.core.text import CAUTION_LINE, caution_sentence
from infer.reporting.batch_markdown import batch_markdown
from infer.reporting.html import image_sources, report_html

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # W3C 2003, PNG specification 5.2
#: a valid 1 x 1 PNG (W3C 2003): signature, IHDR, one IDAT, IEND
TINY_PNG = base64.b64decode(
    "iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mP8z8BQDwAEhQGAhKmMIQAAAABJRU5E"
    "rkJggg==")


class _Page(HTMLParser):
    """Elements (tag, attributes, text inside) of an HTML page, in document order."""

    BLOCKS = ("h1", "h2", "h3", "p", "li", "tr", "pre", "title")
    VOID = ("img", "meta", "br", "hr", "link", "input")

    def __init__(self, text: str):
        super().__init__(convert_charrefs=True)
        self.elements, self._open = [], []
        self.feed(text)

    def handle_starttag(self, tag, attrs):
        element = {"tag": tag, "attrs": dict(attrs), "text": "",
                   "within": {e["tag"] for e in self._open}}
        self.elements.append(element)
        if tag not in self.VOID:
            self._open.append(element)

    def handle_endtag(self, tag):
        for i in range(len(self._open) - 1, -1, -1):
            if self._open[i]["tag"] == tag:
                del self._open[i:]
                break

    def handle_data(self, data):
        for element in self._open:
            element["text"] += data

    def all(self, tag):
        return [e for e in self.elements if e["tag"] == tag]

    def texts(self, tag):
        return [" ".join(e["text"].split()) for e in self.all(tag)]


def _png_size(data: bytes) -> tuple[int, int]:
    assert data[:8] == PNG_SIGNATURE, f"not a PNG: {data[:8]!r}"
    return struct.unpack(">II", data[16:24])  # W3C 2003, PNG specification 11.2.2 (IHDR)


# ---------------------------------------------------------------- the renderer (fast)

REPORT = """# Study <script>alert("x")</script> & co

Caution paragraph of the report itself.

## Posterior

| parameter | median |
|---|---|
| mu | 4.05e-05 |
| s | 0.794 |

### Plots

![Balance curve](balance.png)

Raw <b>bold</b> and <img src=x onerror=alert(1)> stay text.
"""


@pytest.fixture(scope="module")
def page():
    text = report_html(REPORT, {"balance.png": TINY_PNG})
    return text, _Page(text)


def test_headings_and_title(page):
    _, parsed = page
    assert parsed.texts("h1") == ['Study <script>alert("x")</script> & co'], (
        f"h1 {parsed.texts('h1')}: the Markdown heading, its text shown literally")
    assert parsed.texts("h2") == ["Posterior"] and parsed.texts("h3") == ["Plots"], (
        f"h2 {parsed.texts('h2')}, h3 {parsed.texts('h3')}")
    assert parsed.texts("title") == parsed.texts("h1"), (
        f"<title> {parsed.texts('title')} must be the first level-1 heading")


def test_tables_become_html_tables_that_scroll(page):
    _, parsed = page
    assert parsed.texts("th") == ["parameter", "median"], f"header cells {parsed.texts('th')}"
    assert parsed.texts("td") == ["mu", "4.05e-05", "s", "0.794"], (
        f"body cells {parsed.texts('td')}, want the Markdown table's cells in order")
    tags = [e["tag"] for e in parsed.elements]
    wrapper = tags.index("table") - 1
    assert tags[wrapper] == "div" and parsed.elements[wrapper]["attrs"].get("class") == "table", (
        "a table must sit in <div class=table> (overflow-x: auto: it scrolls on a phone)")


def test_images_are_inline_data_uris_of_the_given_bytes(page):
    _, parsed = page
    (img,) = parsed.all("img")  # the raw <img> of the text is escaped, not an element
    src = img["attrs"]["src"]
    prefix = "data:image/png;base64,"
    assert src.startswith(prefix), f"image source {src[:40]!r}: want a PNG data URI"
    assert base64.b64decode(src[len(prefix):]) == TINY_PNG, (
        "the data URI must decode (RFC 4648 base64) to the PNG's bytes")
    assert img["attrs"]["alt"] == "Balance curve", f"alt {img['attrs'].get('alt')!r}"
    assert image_sources(REPORT) == ["balance.png"], image_sources(REPORT)


def test_an_image_not_given_keeps_its_source():
    parsed = _Page(report_html("![Plot](other.png)\n", {}))
    assert [e["attrs"]["src"] for e in parsed.all("img")] == ["other.png"], (
        "an image with no bytes given is left as a relative source")


def test_caution_first_and_last(page):
    _, parsed = page
    body = [e for e in parsed.elements if e["tag"] in ("p", "h1", "h2", "h3", "table")]
    first, last = body[0], body[-1]
    for where, element in (("first", first), ("last", last)):
        assert element["attrs"].get("class") == "caution", (
            f"the {where} block of the page is {element}, want the caution")
        assert " ".join(element["text"].split()) == caution_sentence(), (
            f"{where} caution reads {element['text']!r}")
    assert CAUTION_LINE in caution_sentence().lower(), "caution text from infer/core/text.py"


def test_user_text_is_escaped_and_no_script_runs(page):
    text, parsed = page
    assert "<script" not in text.lower(), "a title holding <script> must not become a script"
    assert "&lt;script&gt;" in text, "the <script> of the title must appear escaped"
    assert parsed.all("b") == [] and len(parsed.all("img")) == 1, (
        "raw HTML in the Markdown must be shown as text (markdown-it html=False)")
    assert "Raw <b>bold</b> and <img src=x onerror=alert(1)> stay text." in parsed.texts("p"), (
        f"paragraphs {parsed.texts('p')}")


def test_phone_and_print_settings(page):
    _, parsed = page
    metas = {e["attrs"].get("name"): e["attrs"].get("content") for e in parsed.all("meta")}
    assert "width=device-width" in (metas.get("viewport") or ""), f"viewport meta {metas}"
    css = page[0].split("<style>", 1)[1].split("</style>", 1)[0]
    for rule in ("max-width: 100%", "overflow-x: auto", "@media print", "break-inside: avoid"):
        assert rule in css, f"the style sheet lacks {rule!r} (phone width, print)"
    assert not [e for e in parsed.elements if e["tag"] in ("link", "script", "iframe")], (
        "the page must need nothing outside itself")


def test_batch_markdown_shows_summary_numbers_and_escapes_the_file_name():
    """batch_markdown lays out summary.json's object; a hostile file name stays text."""
    name = "loci `x` <script>.csv"
    document = {
        "input": {"file": f"/data/{name}", "loci": 12, "loci_with_mu_interval": 7,
                  "skipped_rows": [{"line": 4, "column": "mu", "message": "not a number"}],
                  "ignored_columns": ["mode"]},
        "model": {"name": "deterministic", "convention": "s_het = h*s",
                  "likelihood": "k ~ Binomial(n, q_hat)", "Ne": None, "nu": None,
                  "mu_uncertainty": "log-normal", "assumptions": ["h = 1/2."]},
        "settings": {"s_low": 1e-5, "s_high": 0.5, "grid_points": 400, "interval": 0.95},
        "prior": {"requested": "empirical", "used": "log-normal", "family": "log-normal",
                  "low": 1e-5, "high": 0.5,
                  "fitted": {"median": 0.0123, "sigma": 1.5, "se_log_median": 0.1,
                             "se_log_sigma": 0.05, "at_search_edge": False,
                             "log_bayes_factor_vs_log_uniform": 3.25}},
        "log_marginal_likelihood": -123.456, "expected_count": "n x median",
        "flags": {"zero-observed": {"count": 3, "meaning": "zero | observed"}},
        "medians_across_loci": {"q05": 0.001, "q50": 0.02, "q95": 0.3},
        "execution": {"jobs": 2, "scheduler": None, "chunks": 1},
    }
    text = batch_markdown(document, ("medians.png",))
    parsed = _Page(report_html(text, {"medians.png": TINY_PNG}))
    assert parsed.texts("h1") == [f"Batch: {name}"], f"h1 {parsed.texts('h1')}"
    assert "<script>" not in report_html(text, {}), "the file name must appear escaped"
    cells = parsed.texts("td")
    for shown in ("0.001", "0.02", "0.3", "0.0123", "1.5", "zero | observed", "400"):
        assert shown in cells, f"{shown!r} of the document is not a table cell: {cells}"
    assert any("line 4" in t and "not a number" in t for t in parsed.texts("li")), (
        "the skipped row must be listed")
    assert len(parsed.all("img")) == 1 and text.count("**Caution.**") == 2, (
        "one figure, the caution paragraph at the top and the bottom of report.md")


# ---------------------------------------------------------------- in a browser (slow)

#: written into a test copy of a page: collects script errors, failed loads and
#: console.error calls, and on load writes them and every image's decoded size into the DOM
PROBE = """<script>
window.__errors = [];
window.addEventListener("error", function (e) {
  window.__errors.push(e.message || ("failed to load " + (e.target && e.target.src)));
}, true);
(function () {
  var original = console.error;
  console.error = function () {
    window.__errors.push(Array.prototype.join.call(arguments, " "));
    original.apply(console, arguments);
  };
})();
window.addEventListener("load", function () {
  var out = document.createElement("pre");
  out.id = "probe";
  out.textContent = JSON.stringify({
    errors: window.__errors, inner: window.innerWidth,
    scroll: document.documentElement.scrollWidth,
    images: Array.prototype.map.call(document.images, function (i) {
      return [i.complete, i.naturalWidth, i.naturalHeight]; })});
  document.body.appendChild(out);
});
</script>
"""
PHONE = (390, 2400)  # CSS px: a common phone width (common practice)


def _chromium() -> str:
    found = next(filter(None, map(shutil.which, ("chromium", "chromium-browser"))), None)
    if found is None:
        if os.environ.get("CI") == "true":
            pytest.fail("CI: chromium is not installed (.ci/run installs it with apt-get)")
        pytest.skip("chromium is not installed (Debian: apt-get install chromium); "
                    "CI installs it and runs this test")
    return found


def _browse(page: Path, work: Path, *options) -> subprocess.CompletedProcess:
    work.mkdir(parents=True, exist_ok=True)
    command = [_chromium(), "--headless", "--no-sandbox", "--disable-gpu",
               "--disable-dev-shm-usage", "--no-first-run", "--hide-scrollbars",
               f"--user-data-dir={work / 'profile'}", *options, page.as_uri()]
    done = subprocess.run(command, capture_output=True, text=True, timeout=180)
    assert done.returncode == 0, f"{' '.join(command)} exited {done.returncode}: {done.stderr}"
    return done


def _page_bounds(page_html: str, pngs: list[bytes]) -> tuple[int, int]:
    """Fewest and most pages the printed page can take (derived from its content).

    The paper is the browser's default, A4 or US Letter; the print style sheet sets 15 mm
    margins, so the printed area is 180 x 267 mm (A4) or 185.9 x 249.4 mm (Letter).

    Fewest: the figures and the text cannot overlap, so the pages hold at least their
    heights. A figure prints at its CSS size (1 px = 1/96 in), shrunk to the widest
    printed width (185.9 mm) when wider; each text block (paragraph, heading, table row)
    is at least one line of the smallest font (8 pt) at line-height 1.5 (12 pt); the
    total over the tallest page (267 mm).

    Most: a figure (at most 230 mm tall by the print style sheet, so it fits a page) never
    breaks, so it can push the rest to a new page: each figure costs at most one page.
    The text is at most ceil(characters / 20) lines per table row and ceil(characters / 40)
    per other block -- the printed width holds about 90 characters of 10 pt text (an
    average glyph about 0.55 em wide, common practice), a narrow table column about 20 --
    each line at most 6 mm (10 pt at line-height 1.5 is 5.3 mm) plus 8 mm of margins per
    block, over the shortest page (249.4 mm); one more page for the last partial one.
    """
    mm_per_px = 25.4 / 96
    figures = 0.0
    for data in pngs:
        width, height = (v * mm_per_px for v in _png_size(data))
        figures += height * min(1.0, 185.9 / width)
    blocks = _Page(page_html)
    blocks = [e for e in blocks.elements if e["tag"] in _Page.BLOCKS and e["tag"] != "title"]
    line_mm = 12 / 72 * 25.4
    lower_text = line_mm * sum(e["tag"] != "p" or "li" not in e["within"] for e in blocks)
    upper_text = sum(math.ceil(len(e["text"].strip()) / (20 if e["tag"] == "tr" else 40)) * 6
                     + 8 for e in blocks)
    fewest = math.ceil((figures + lower_text) / 267)
    most = math.ceil(upper_text / 249.4) + len(pngs) + 1
    return fewest, most


def _pdf_pages(data: bytes) -> int:
    # ISO 32000-1:2008, 7.7.3: /Type /Page per page; /Type /Pages is a tree node
    return len(re.findall(rb"/Type\s*/Page(?![A-Za-z])", data))


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    """The report folders of the three commands, each from a demo input."""
    root = tmp_path_factory.mktemp("html")
    runs = {"estimate": ("estimate", DEMO / "island-dominant.toml", "--quiet"),
            "check": ("check", DEMO / "claim-varrow-dominant.toml"),
            "batch": ("batch", DEMO / "batch_loci.csv", "--quiet")}
    folders = {}
    for name, args in runs.items():
        out = root / name
        done = run_qhat(*args, "--out", out)
        assert done.returncode in (0, 3) and (out / "report.html").is_file(), str(done)
        folders[name] = out
    return folders


@pytest.mark.slow
@pytest.mark.parametrize("command", ["estimate", "check", "batch"])
def test_report_html_in_a_headless_browser(reports, command, tmp_path):
    """The page of each command renders, decodes every image, logs no error and prints."""
    _chromium()
    folder = reports[command]
    page = folder / "report.html"
    text = page.read_text(encoding="utf-8")
    markdown = (folder / "report.md").read_text(encoding="utf-8")
    names = image_sources(markdown)
    pngs = [(folder / name).read_bytes() for name in names]
    assert names and all(name.endswith(".png") for name in names), f"images {names}"
    assert "src=\"data:image/png;base64," in text and not any(
        f'src="{name}"' in text for name in names), "every image must be inline"

    # 1. renders: a phone-sized screenshot, and no console message on the way
    shot = tmp_path / "phone.png"
    done = _browse(page, tmp_path / "b1", f"--screenshot={shot}",
                   f"--window-size={PHONE[0]},{PHONE[1]}", "--enable-logging=stderr", "--v=0")
    console = [line for line in done.stderr.splitlines() if ":CONSOLE" in line]
    assert not console, f"{command}: console messages while loading the page: {console}"
    from matplotlib import image

    pixels = image.imread(shot)
    assert pixels.shape[:2] == (PHONE[1], PHONE[0]), f"screenshot {pixels.shape}"
    assert float(pixels[..., :3].std()) > 0.01, f"{command}: the screenshot is blank"

    # 2. every image decoded at its PNG size, no error, nothing wider than the phone
    probe = tmp_path / "probe.html"
    probe.write_text(text.replace("<head>\n", "<head>\n" + PROBE, 1), encoding="utf-8")
    dom = _browse(probe, tmp_path / "b2", "--dump-dom",
                  f"--window-size={PHONE[0]},{PHONE[1]}").stdout
    found = re.search(r'<pre id="probe">(.*?)</pre>', dom, re.S)
    assert found, f"{command}: the probe did not run; DOM starts {dom[:300]!r}"
    result = json.loads(found.group(1).replace("&quot;", '"').replace("&amp;", "&"))
    assert result["errors"] == [], f"{command}: errors in the page: {result['errors']}"
    decoded = [(w, h) for complete, w, h in result["images"]]
    assert decoded == [_png_size(data) for data in pngs], (
        f"{command}: decoded sizes {decoded}, want the PNGs' IHDR sizes (W3C 2003, 11.2.2) "
        "in report.md's order; naturalWidth 0 means not decoded (WHATWG HTML)")
    assert result["scroll"] <= result["inner"], (
        f"{command}: page {result['scroll']} px wide on a {result['inner']} px screen: "
        "only tables may scroll sideways, inside their wrapper")

    # 3. prints to PDF with a page count the content explains
    pdf = tmp_path / "report.pdf"
    _browse(page, tmp_path / "b3", f"--print-to-pdf={pdf}", "--no-pdf-header-footer")
    data = pdf.read_bytes()
    assert data[:5] == b"%PDF-", f"{command}: not a PDF: {data[:8]!r}"
    pages = _pdf_pages(data)
    fewest, most = _page_bounds(text, pngs)
    assert 2 <= fewest <= pages <= most, (
        f"{command}: {pages} printed pages, want {fewest}..{most} (derived from the figures' "
        "sizes and the text's length, see _page_bounds)")


@pytest.mark.slow
def test_the_probe_sees_a_broken_image_and_a_script_error(tmp_path):
    """Control for the checks above: the same probe on a page with a missing image, a
    console.error call and a failing script reports all three and a naturalWidth of 0."""
    _chromium()
    broken = report_html("# Control\n\n![gone](missing.png)\n", {}).replace(
        "</main>", '<script>console.error("control"); notDefined();</script></main>')
    probe = tmp_path / "broken.html"
    probe.write_text(broken.replace("<head>\n", "<head>\n" + PROBE, 1), encoding="utf-8")
    dom = _browse(probe, tmp_path / "b", "--dump-dom").stdout
    found = re.search(r'<pre id="probe">(.*?)</pre>', dom, re.S)
    assert found, f"the probe did not run; DOM starts {dom[:300]!r}"
    result = json.loads(found.group(1).replace("&quot;", '"').replace("&amp;", "&"))
    assert [w for _, w, _ in result["images"]] == [0], (
        f"a missing image must have naturalWidth 0 (WHATWG HTML); got {result['images']}")
    errors = " | ".join(result["errors"])
    for expected in ("control", "notDefined", "missing.png"):
        assert expected in errors, f"the probe missed {expected!r}: {result['errors']}"
