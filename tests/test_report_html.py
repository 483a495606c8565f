"""The HTML report: one self-contained page, user text escaped, spectra drawn as the trade draws them,
and a page a browser renders without complaint."""

from __future__ import annotations

import colorsys
import re
import shutil
import struct
import subprocess
import xml.etree.ElementTree as ET
import zlib
from html import escape
from html.parser import HTMLParser
from pathlib import Path

import pytest
from rdkit import Chem

from rank.errors import InputError
from rank.report import report_html, stick_svg, structure_svg
from rank.shortlist import CAUTION, Identifier

# Ethyl acetate in CDCl3: 4.12 (q, J 7.1), 2.05 (s), 1.26 (t, J 7.1), and residual CHCl3 at 7.26 ppm;
# solvent-impurity table of Gottlieb, Kotlyar and Nudelman, J. Org. Chem. 1997, 62, 7512,
# doi:10.1021/jo971176v (from memory).
ETHYL_ACETATE = "4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H), 1.26 (t, J = 7.1 Hz, 3H)"
RESIDUAL_CHCL3 = "7.26 (s)"
HOSTILE = "<script>alert(1)</script> & \"quoted\" <img src=x onerror=alert(2)>"
SVG_NS = "http://www.w3.org/2000/svg"


@pytest.fixture(scope="module")
def result():
    return Identifier(top=3).identify("C4H8O2", ETHYL_ACETATE)


@pytest.fixture(scope="module")
def with_chcl3():
    return Identifier(top=3).identify("C4H8O2", f"{ETHYL_ACETATE}, {RESIDUAL_CHCL3}")


@pytest.fixture(scope="module")
def page(result):
    return report_html(result)


class _Text(HTMLParser):
    """Visible text of a page, entities decoded; also the text of each element named in ``keep``."""

    def __init__(self, keep=("h1", "title", "h2", "li")):
        super().__init__()
        self.keep, self.chunks, self.found, self._open = keep, [], {k: [] for k in keep}, []

    def handle_starttag(self, tag, attrs):
        if tag in self.keep:
            self._open.append([tag, ""])

    def handle_endtag(self, tag):
        if self._open and self._open[-1][0] == tag:
            name, text = self._open.pop()
            self.found[name].append(text)

    def handle_data(self, data):
        self.chunks.append(data)
        for entry in self._open:
            entry[1] += data

    @property
    def text(self) -> str:
        return " ".join(" ".join(self.chunks).split())


def _parse(html: str) -> _Text:
    parser = _Text()
    parser.feed(html)
    parser.close()
    return parser


def _svgs(html: str) -> list[ET.Element]:
    return [ET.fromstring(m) for m in re.findall(r"<svg\b.*?</svg>", html, flags=re.DOTALL)]


def _stick_lines(svg: ET.Element) -> dict[str, ET.Element]:
    """The spectrum's sticks by the text of their tooltip."""
    return {line.find(f"{{{SVG_NS}}}title").text: line for line in svg.iter(f"{{{SVG_NS}}}line")
            if line.find(f"{{{SVG_NS}}}title") is not None}


def _observed(sticks: dict[str, ET.Element], label: str) -> ET.Element:
    """The observed stick of the peak labelled ``label`` (its tooltip starts with the label)."""
    found = [line for title, line in sticks.items() if title.startswith(f"{label},")]
    assert len(found) == 1, label
    return found[0]


def _predicted(sticks: dict[str, ET.Element]) -> list[ET.Element]:
    """The predicted sticks in signal order (tooltips read 'δ ppm, nH multiplicity')."""
    return [line for title, line in sticks.items() if re.match(r"-?\d+\.\d\d ppm, ", title)]


def _dbe(c: int, h: int, n: int = 0, halogens: int = 0) -> float:
    # degree of unsaturation, (2C + 2 + N - H - X) / 2 (textbook formula)
    return (2 * c + 2 + n - h - halogens) / 2


# ----------------------------------------------------------- static checks ----


def test_ethyl_acetate_ranks_first_so_the_page_is_about_a_real_answer(result):
    assert Chem.CanonSmiles(result.candidates[0].smiles) == Chem.CanonSmiles("CCOC(C)=O")
    assert 1 < len(result.candidates) <= 3  # a short list, not a lone answer


def test_report_is_one_document_without_external_references(page):
    assert page.count("<!DOCTYPE html>") == 1
    assert page.count("<html") == 1 and page.count("</html>") == 1
    assert page.count("<head>") == 1 and page.count("<body>") == 1
    # namespace declarations name the SVG vocabulary; they are not fetched
    without_ns = re.sub(r"""xmlns=(["'])http://www\.w3\.org/2000/svg\1""", "", page)
    assert "http://" not in without_ns and "https://" not in without_ns
    lowered = page.lower()
    for forbidden in ("<script", "<link", "<iframe", "<object", "<embed", "<img", "@import", "url(",
                      "@font-face", "src=", "href="):
        assert forbidden not in lowered, forbidden


def test_report_forbids_the_browser_any_load(page):
    policy = re.search(r"""http-equiv='Content-Security-Policy' content="([^"]*)\"""", page)
    assert policy is not None
    assert "default-src 'none'" in policy.group(1)


def test_every_inline_svg_is_well_formed(page, result):
    svgs = _svgs(page)
    # one structure and one stick spectrum per candidate shown
    assert len(svgs) == 2 * len(result.candidates)
    assert all(s.tag == f"{{{SVG_NS}}}svg" for s in svgs)


def test_report_shows_the_caution_twice_and_each_candidate(page, result):
    text = _parse(page).text
    assert text.count(CAUTION) == 2
    for c in result.candidates:
        assert c.smiles in text
        # InChIKey computed by RDKit as the reference library
        assert Chem.MolToInchiKey(Chem.MolFromSmiles(c.smiles)) in text
        assert f"Rank {c.rank}" in text


def test_report_shows_formula_dbe_solvent_and_field(page):
    text = _parse(page).text
    assert "Formula C4H8O2" in text
    assert f"DBE {_dbe(4, 8):g}" in text
    assert "solvent CDCl3" in text
    assert "400 MHz" in text
    assert "No peak dropped." in text


def test_residual_chcl3_singlet_is_listed_as_dropped_and_not_as_used(with_chcl3):
    html = report_html(with_chcl3)
    parsed = _parse(html)
    assert "Dropped:" in parsed.text
    dropped = [li for li in parsed.found["li"] if li.startswith("7.26")]
    assert len(dropped) == 1 and "CDCl3" in dropped[0]
    used = html.split("Dropped:")[0].split("<h2>Input</h2>")[1]
    assert used.count("<tr>") == 1 + 3  # header and the three ethyl acetate peaks
    assert "7.26" not in used


def test_dropped_peak_is_drawn_dashed_in_the_spectrum(with_chcl3):
    svg = ET.fromstring(stick_svg(with_chcl3.candidates[0], with_chcl3))
    sticks = _stick_lines(svg)
    dropped = _observed(sticks, "7.26 (s)")
    assert dropped.get("stroke-dasharray")
    assert "dropped" in dropped.find(f"{{{SVG_NS}}}title").text


def test_title_is_escaped_and_no_markup_gets_through(result):
    html = report_html(result, title=HOSTILE)
    assert "<script" not in html.lower() and "<img" not in html.lower()
    assert escape(HOSTILE) in html
    parsed = _parse(html)
    assert parsed.found["h1"] == [HOSTILE]
    assert parsed.found["title"][0] == HOSTILE  # the document title; the rest are SVG tooltips


def test_markup_in_a_peak_list_header_is_refused_before_any_page(result):
    with pytest.raises(InputError):
        Identifier(top=3).identify("C4H8O2", f"1H NMR (400 MHz, {HOSTILE}) δ {ETHYL_ACETATE}")


# ------------------------------------------------------------ the drawings ----


def test_stick_spectrum_ppm_axis_decreases_to_the_right(result):
    svg = ET.fromstring(stick_svg(result.candidates[0], result))
    ticks = [(float(t.get("x")), int(t.text)) for t in svg.iter(f"{{{SVG_NS}}}text")
             if t.text and re.fullmatch(r"-?\d+", t.text)]
    assert len(ticks) >= 10  # 10 to 0 ppm at least
    values = [v for _, v in sorted(ticks)]
    assert values == sorted(values, reverse=True)
    assert values[0] >= 10 and values[-1] <= 0
    # the data follow the labels: the 4.12 quartet stands left of the 1.26 triplet
    sticks = _stick_lines(svg)
    quartet, triplet = _observed(sticks, "4.12 (q)"), _observed(sticks, "1.26 (t)")
    assert float(quartet.get("x1")) < float(triplet.get("x1"))


def test_stick_heights_are_h_counts_on_one_scale(result):
    best = result.candidates[0]
    svg = ET.fromstring(stick_svg(best, result))
    sticks = _stick_lines(svg)

    def height(line):
        return abs(float(line.get("y2")) - float(line.get("y1")))

    quartet, singlet = _observed(sticks, "4.12 (q)"), _observed(sticks, "2.05 (s)")
    # CH2 quartet 2H against CH3 singlet 3H
    assert height(quartet) / height(singlet) == pytest.approx(2 / 3, rel=0.01)
    assert sorted(round(height(p) / height(singlet), 2) for p in _predicted(sticks)) == [0.67, 1.0, 1.0]


def test_relative_integrals_are_drawn_as_whole_h_counts(tmp_path):
    # the same spectrum as a CSV export with relative integrals (ten times the H counts)
    export = tmp_path / "ethyl_acetate.csv"
    export.write_text("shift,integral,multiplicity,j\n4.12,20.0,q,7.1\n2.05,30.0,s,\n1.26,30.0,t,7.1\n")
    relative = Identifier(top=1).identify("C4H8O2", str(export))
    assert [p.integral for p in relative.observation.peaks] == [20.0, 30.0, 30.0]
    sticks = _stick_lines(ET.fromstring(stick_svg(relative.candidates[0], relative)))

    def height(line):
        return abs(float(line.get("y2")) - float(line.get("y1")))

    singlet = _observed(sticks, "2.05 (s)")
    assert "3H" in singlet.find(f"{{{SVG_NS}}}title").text
    # observed 3H and predicted 3H on one scale, so equal heights
    assert max(height(p) for p in _predicted(sticks)) == pytest.approx(height(singlet))


def test_observed_stick_takes_the_colour_of_its_assigned_class(result):
    for c in result.candidates:
        svg = ET.fromstring(stick_svg(c, result))
        sticks = _stick_lines(svg)
        predicted = [line.get("stroke") for line in _predicted(sticks)]
        assert len(set(predicted)) == len(c.scored.signals)  # one colour per class
        for p in c.scored.match.pairings:
            if p.peak is None:
                continue
            label = result.observation.peaks[p.peak].caption
            assert _observed(sticks, label).get("stroke") == predicted[p.signal]


def _hue(hex_colour: str) -> float:
    r, g, b = (int(hex_colour[k:k + 2], 16) / 255 for k in (1, 3, 5))
    return colorsys.rgb_to_hls(r, g, b)[0]


def test_structure_highlights_share_the_hue_of_each_class(result):
    for c in result.candidates:
        stick_colours = [line.get("stroke") for line in _predicted(_stick_lines(ET.fromstring(stick_svg(c, result))))]
        fills = set(re.findall(r"fill:(#[0-9A-Fa-f]{6})", structure_svg(c)))
        hues = [_hue(f) for f in fills]
        for colour in stick_colours:
            assert any(abs(_hue(colour) - h) < 0.01 for h in hues), colour


def test_table_swatch_matches_the_predicted_stick(page, result):
    best = result.candidates[0]
    section = page.split(f"<h2>Rank {best.rank}")[1].split("<h2>")[0]
    swatches = re.findall(r"class='swatch' style='background:(#[0-9a-f]{6})'", section)
    sticks = _stick_lines(ET.fromstring(stick_svg(best, result)))
    predicted = [line.get("stroke") for line in _predicted(sticks)]
    order = [p.signal for p in best.scored.match.pairings]
    assert swatches == [predicted[i] for i in order]


# --------------------------------------------------------------- a browser ----


_CHROMIUM = shutil.which("chromium") or (
    "/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None)
_CONSOLE = re.compile(r"CONSOLE[:(]|Uncaught|Refused to")


def _chromium(profile: Path, *args: str) -> subprocess.CompletedProcess:
    """Headless Chromium with a fresh profile and every background connection switched off."""
    profile.mkdir(exist_ok=True)
    command = [_CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
               "--disable-background-networking", "--disable-component-update", "--disable-sync",
               f"--user-data-dir={profile}", *args]
    return subprocess.run(command, capture_output=True, text=True, timeout=60, check=False)


def _console_lines(stderr: str) -> list[str]:
    return [line for line in stderr.splitlines() if _CONSOLE.search(line)]


def _busy_rows(path: Path) -> tuple[int, int, float]:
    """Width, height and the share of pixel rows that carry something.

    A PNG row is stored filtered (PNG specification, section 9): a row of one
    colour, or a row repeating the one above, filters to a run of one byte
    value after its first pixel; a row with anything drawn on it does not.
    """
    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    width, height, depth, colour_type = struct.unpack(">IIBB", data[16:26])
    assert depth == 8 and colour_type in (2, 6)  # 8-bit RGB or RGBA
    pixel = 3 if colour_type == 2 else 4
    chunks, pos = [], 8
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        if kind == b"IDAT":
            chunks.append(data[pos + 8:pos + 8 + length])
        pos += 12 + length
    raw = zlib.decompress(b"".join(chunks))
    stride = 1 + pixel * width
    assert len(raw) == stride * height
    busy = 0
    for y in range(height):
        body = raw[y * stride + 1 + pixel:(y + 1) * stride]
        busy += body.count(body[:1]) != len(body)
    return width, height, busy / height


@pytest.fixture(scope="module")
def browser():
    if _CHROMIUM is None:
        pytest.skip("Chromium not installed (Debian: apt-get install chromium); the report is not rendered")
    return _CHROMIUM


def test_console_scan_sees_a_page_error(browser, tmp_path):
    # the control: a page that does log must be caught, or a clean scan would prove nothing
    probe = tmp_path / "probe.html"
    probe.write_text("<!DOCTYPE html><html><body><p>probe</p>"
                     "<script>console.error('probe error'); missingFunction();</script></body></html>")
    run = _chromium(tmp_path / "profile", "--enable-logging=stderr", "--v=0", "--dump-dom", probe.as_uri())
    assert run.returncode == 0, run.stderr[-2000:]
    assert any("probe error" in line for line in _console_lines(run.stderr))


def test_report_renders_in_chromium_without_console_messages(browser, tmp_path, result):
    path = tmp_path / "report.html"
    html = report_html(result, title=HOSTILE)
    path.write_text(html, encoding="utf-8")
    run = _chromium(tmp_path / "profile", "--enable-logging=stderr", "--v=0", "--dump-dom", path.as_uri())
    assert run.returncode == 0, run.stderr[-2000:]
    # the page has no scripts: any console line is a refused load or a rendering error
    assert _console_lines(run.stderr) == []
    dom = _parse(run.stdout)
    assert dom.found["h1"] == [HOSTILE]
    assert [h for h in dom.found["h2"] if h.startswith("Rank")] == [
        f"Rank {c.rank}{' (tied)' if c.tied else ''}: {c.smiles}" for c in result.candidates]
    assert run.stdout.count("<svg") == 2 * len(result.candidates)
    assert CAUTION in dom.text


def test_report_screenshot_is_a_real_picture(browser, tmp_path, result):
    path = tmp_path / "report.html"
    path.write_text(report_html(result), encoding="utf-8")
    png = tmp_path / "report.png"
    run = _chromium(tmp_path / "profile", f"--screenshot={png}", "--window-size=1200,2000", path.as_uri())
    assert run.returncode == 0, run.stderr[-2000:]
    width, height, busy = _busy_rows(png)
    assert (width, height) == (1200, 2000)
    # a blank page has no busy row and one heading about 1 %; the report fills the window
    assert busy > 0.2


def _lorentzian_trace(points: int = 65536):
    """A measured-looking 1H trace: ethyl acetate's three groups as Lorentzians (the CH3 singlet tallest)
    on -1 to 13 ppm, with a little noise."""
    import numpy as np

    from rank.spectra import Trace

    ppm = np.linspace(13.0, -1.0, points)
    y = sum(h / (1 + ((ppm - c) / 0.002) ** 2) for c, h in ((4.12, 20.0), (2.05, 100.0), (1.26, 30.0)))
    y = y + np.random.default_rng(1).normal(0, 0.05, points)
    return Trace(ppm, y, "1H", 400.0, "CDCl3", "zg30", "ethyl acetate <test>")


def test_measured_trace_is_drawn_downsampled_under_the_sticks(result):
    from rank.report.html import TRACE_POINTS

    trace = _lorentzian_trace()
    svg = ET.fromstring(stick_svg(result.candidates[0], result, trace=trace))
    lines = svg.findall(f"{{{SVG_NS}}}polyline")
    assert len(lines) == 1
    points = [tuple(map(float, p.split(","))) for p in lines[0].get("points").split()]
    assert 1000 < len(points) <= TRACE_POINTS
    # the tallest point of the drawing is the 2.05 singlet, right where its observed stick stands
    top_x = min(points, key=lambda p: p[1])[0]
    assert top_x == pytest.approx(float(_observed(_stick_lines(svg), "2.05 (s)").get("x1")), abs=1.0)
    assert "ethyl acetate &lt;test&gt;" in stick_svg(result.candidates[0], result, trace=trace)


def test_report_draws_the_trace_only_when_given(result):
    assert "<polyline" not in report_html(result)
    with_trace = report_html(result, trace=_lorentzian_trace())
    assert with_trace.count("<polyline") == min(3, len(result.candidates))
    assert "measured spectrum" in with_trace
    for svg in _svgs(with_trace):
        assert svg is not None  # every drawing still parses
