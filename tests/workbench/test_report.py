"""The report: PDF text read back, HTML escaping and embedding, command line exit codes.

The PDF's text is read back with a small standard-library reader (below): Qt writes
each glyph as a hex code under a Type0 font whose ToUnicode CMap (PDF 1.7,
ISO 32000-1 section 9.10.3) maps it back to text.  ``pdftotext`` is not installed
here.  Spaces come back as tabs or not at all, so texts are compared with all
white space removed and ligatures unfolded (Unicode NFKC).
"""

from __future__ import annotations

import base64
import hashlib
import html
import html.parser
import json
import re
import unicodedata
import zlib
from pathlib import Path

import pytest

import workbench
from dsp.model import GearTrain, Mesh, Sensor, Shaft, Tach, loads_model
from dsp.synth import Fault, simulate, write_simulation
from workbench.cli import main
from workbench.report import CAUTIONS, SUSPECTS_LABEL, collect
from workbench.report_html import report_html
from workbench.report_pdf import write_pdf

DEMO = Path(workbench.__file__).resolve().parents[1] / "demo_recordings" / "03_broken_tooth.flac"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"   # PNG specification (ISO/IEC 15948), section 5.2


# ---------------------------------------------------------------------- PDF text reader
def _stream(body: bytes) -> bytes:
    match = re.search(rb"stream\r?\n(.*?)\r?\nendstream", body, re.S)
    if match is None:
        return b""
    raw = match.group(1)
    return zlib.decompress(raw) if b"/FlateDecode" in body.split(b"stream")[0] else raw


def _cmap(text: bytes) -> dict[int, str]:
    table: dict[int, str] = {}
    for block in re.findall(rb"beginbfchar(.*?)endbfchar", text, re.S):
        for src, dst in re.findall(rb"<([0-9A-Fa-f]+)>\s*<([0-9A-Fa-f]+)>", block):
            table[int(src, 16)] = bytes.fromhex(dst.decode()).decode("utf-16-be")
    for block in re.findall(rb"beginbfrange(.*?)endbfrange", text, re.S):
        for lo, hi, dst, many in re.findall(
                rb"<([0-9A-Fa-f]+)>\s*<([0-9A-Fa-f]+)>\s*(?:<([0-9A-Fa-f]+)>|\[([^\]]*)\])", block):
            lo, hi = int(lo, 16), int(hi, 16)
            if dst:
                start = int.from_bytes(bytes.fromhex(dst.decode()), "big")
                table.update({k: chr(start + k - lo) for k in range(lo, hi + 1)})
            else:
                for k, h in zip(range(lo, hi + 1), re.findall(rb"<([0-9A-Fa-f]+)>", many)):
                    table[k] = bytes.fromhex(h.decode()).decode("utf-16-be")
    return table


def pdf_text(data: bytes) -> str:
    """Text drawn in a Qt-written PDF, in drawing order."""
    objects = {int(n): body for n, body in re.findall(rb"(\d+) 0 obj(.*?)endobj", data, re.S)}
    fonts = {}
    for name, num in re.findall(rb"/(F\d+)\s+(\d+)\s+0\s+R", data):
        ref = re.search(rb"/ToUnicode\s+(\d+)\s+0\s+R", objects.get(int(num), b""))
        if ref:
            fonts[name.decode()] = _cmap(_stream(objects[int(ref.group(1))]))
    out = []
    for body in objects.values():
        head = body.split(b"stream", 1)[0]
        if b"stream" not in body or b"/Subtype /Image" in head or b"/Length1" in head or b"/Type" in head:
            continue   # only page content streams carry text (images, fonts and metadata are typed)
        content = _stream(body)
        if b"BT" not in content:
            continue
        font: dict[int, str] = {}
        for token in re.finditer(rb"/(F\d+)\s+[\d.]+\s+Tf|<([0-9A-Fa-f]+)>\s*Tj|\[([^\]]*)\]\s*TJ", content):
            if token.group(1):
                font = fonts.get(token.group(1).decode(), {})
                continue
            codes = [token.group(2)] if token.group(2) else re.findall(rb"<([0-9A-Fa-f]+)>", token.group(3))
            for code in codes:
                code = code.decode()
                out.extend(font.get(int(code[i:i + 4], 16), "\ufffd") for i in range(0, len(code), 4))
    return "".join(out)


def squeeze(text: str) -> str:
    return re.sub(r"\s+", "", unicodedata.normalize("NFKC", text))


def n_pages(data: bytes) -> int:
    return len(re.findall(rb"/Type\s*/Page\b(?!s)", data))   # ISO 32000-1 7.7.3.3: one page object per page


# ---------------------------------------------------------------------- a short recording
def _train() -> GearTrain:
    return GearTrain(name="Report test pair <b>&</b>", sensors=(Sensor("case", 0, 5.0, "g", "output bearing", "radial"),),
                     tach=Tach(shaft="in", channel=1, nominal_rpm=1200.0), shafts=(Shaft("in"), Shaft("out")),
                     meshes=(Mesh("pair", "in", 19, "out", 47),))


@pytest.fixture(scope="module")
def recording_path(tmp_path_factory):
    path = tmp_path_factory.mktemp("rep") / "pair.flac"
    sim = simulate(_train(), rpm=1200, duration_s=3.0, fs=8000, seed=11,
                   faults=[Fault("tooth", "out", tooth=5, severity="severe")])
    write_simulation(sim, path, _train())
    return path


def test_pdf_holds_the_frequency_table_the_suspects_and_the_cautions(qtbot, tmp_path, recording_path):
    inp, _ = collect(recording_path)
    result = write_pdf(inp, tmp_path / "report.pdf")
    data = result.path.read_bytes()
    assert data.startswith(b"%PDF-")                                        # ISO 32000-1 7.5.2 file header
    assert n_pages(data) == result.n_pages and result.n_pages >= 3          # what was laid out was printed
    text = squeeze(pdf_text(data))
    a = inp.analysis
    f_in = a.speed.mean_hz
    # the frequency table: GMF = Z x shaft rate, f_out = f_in x 19/47 (domain reference 1.1)
    gmf_row = next(r for r in a.frequencies.rows if r.label == "pair GMF")
    assert gmf_row.hz == pytest.approx(19 * f_in, rel=1e-9)
    assert f"pairGMF{19 * f_in:.4f}" in text
    assert f"outshaft{f_in * 19 / 47:.4f}" in text
    assert f_in * 60 == pytest.approx(1200.0, rel=0.01)                    # the simulated 1200 rpm, read from the tach
    # the suspects with their evidence, labelled as an aid, not a verdict
    assert a.suspects and a.suspects[0].component == "shaft:out"
    assert squeeze(f"Suspects ({SUSPECTS_LABEL})") in text
    assert squeeze(a.suspects[0].component) in text and squeeze(a.suspects[0].evidence[0]) in text
    # the cautions, word for word
    for caution in CAUTIONS:
        assert squeeze(caution) in text
    # facts: the recording's SHA-256 (FIPS 180-4, hashlib) and the escaped model name shown as text
    assert hashlib.sha256(recording_path.read_bytes()).hexdigest() in text
    assert squeeze("Report test pair <b>&</b>") in text
    # the HTML the document was built from says the same
    assert "pair GMF" in result.html and "&lt;b&gt;&amp;&lt;/b&gt;" in result.html


class _Tags(html.parser.HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags: list[tuple[str, dict]] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))


def test_html_escapes_user_text_and_embeds_the_pictures(qtbot, tmp_path, recording_path):
    from workbench import snapshot
    from workbench.session import Session
    from workbench.session_store import save_session
    from workbench.views.tsa import TsaView

    inp, recording = collect(recording_path)
    model = loads_model(recording_path.with_suffix(".toml").read_text())
    session = Session(recording_path=recording_path, model=model)
    session.select_shaft("out")
    attack = '<script>alert("x")</script>'
    session.set_annotations([{"id": "n1", "view": "tsa", "kind": "note", "x": 40.0, "y": 0.2,
                              "text": f"tooth 5 {attack}", "x_units": "deg", "y_units": "g"}])
    view = TsaView(session)
    qtbot.addWidget(view)
    view.resize(800, 450)
    view.show()
    view.show_analysis(inp.analysis, recording)
    entry = snapshot.take_snapshot(session=session, analysis=inp.analysis, view=view, folder=tmp_path,
                                   caption=f"caption {attack}", recording=recording)
    session.set_snapshots([entry])
    session.set_findings(f"Broken tooth on the output gear. {attack}\n\nReplace the gear <soon>.")
    session_path = save_session(session, tmp_path / "job.json")

    Path(entry["png"]).unlink()                                             # the picture is lost, its recipe is not
    out = tmp_path / "report.html"
    assert main(["report", str(recording_path), "--session", str(session_path), "-o", str(out)]) == 0
    assert Path(entry["png"]).is_file()                                     # drawn again from the recipe
    text = out.read_text(encoding="utf-8")
    assert "<script" not in text.lower()                                    # no raw script from user text
    assert text.count("&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;") == 3   # note, caption, findings
    assert "Replace the gear &lt;soon&gt;." in text
    parser = _Tags()
    parser.feed(text)
    images = [attrs for tag, attrs in parser.tags if tag == "img"]
    assert len(images) == 1                                                  # the session's one snapshot
    for attrs in images:                                                     # self-contained: data: URIs only
        assert attrs["src"].startswith("data:image/png;base64,")
        assert base64.b64decode(attrs["src"].split(",", 1)[1]).startswith(PNG_SIGNATURE)
    assert {tag for tag, _ in parser.tags} <= {"html", "head", "meta", "title", "style", "body", "h1", "h2", "h3",
                                               "p", "b", "br", "ul", "ol", "li", "table", "tr", "th", "td", "img"}
    for caution in CAUTIONS:
        assert caution.replace("'", "&#x27;") in text


def test_severity_zone_comes_with_its_caution(qtbot, recording_path):
    from dataclasses import replace

    from dsp import severity

    inp, _ = collect(recording_path)
    assert "Severity zone" not in report_html(inp) and severity.CAUTION not in report_html(inp)
    zone = severity.velocity_zone(5.0, group="group 2", foundation="rigid")
    assert zone.zone == "D"                                # 4.5 mm/s is the C/D limit, group 2 rigid (dsp.severity, from memory)
    text = report_html(replace(inp, severity=zone))
    assert "Severity zone (ISO 20816-3)" in text and "zone D" in text
    assert html.escape(severity.CAUTION) in text           # the zone is never shown without its caution


def test_report_html_function_escapes_every_text_field(qtbot, recording_path):
    inp, _ = collect(recording_path)
    from dataclasses import replace

    from workbench.report import ReportImage

    tiny_png = base64.b64decode("iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mP8/5+hHgAHggJ/PchI7wAAAABJRU5ErkJggg==")
    evil = "<img src=x onerror=alert(1)>"
    text = report_html(replace(inp, findings=evil, notes=(evil,),
                               images=(ReportImage(title=evil, png=tiny_png, caption=evil, notes=(evil,)),)))
    assert "<img src=x" not in text and text.count("&lt;img src=x onerror=alert(1)&gt;") >= 5


def test_cli_report_on_the_demo_and_bad_input(qtbot, tmp_path, capsys):
    out = tmp_path / "demo.pdf"
    assert main(["report", str(DEMO), "-o", str(out)]) == 0
    data = out.read_bytes()
    assert data.startswith(b"%PDF-") and n_pages(data) >= 3
    text = squeeze(pdf_text(data))
    assert "shaft:intermediate" in text                     # demo README: 03 is a broken intermediate wheel tooth
    assert "Figure3.Envelopespectrum" in text and "Figure2.TSAofshaftintermediate" in text
    capsys.readouterr()
    for argv, words in (
        (["report", str(tmp_path / "missing.flac"), "-o", str(tmp_path / "r.pdf")], "recording not found"),
        (["report", str(DEMO), "-o", str(tmp_path / "r.docx")], "use an output name ending in .pdf or .html"),
        (["report", str(DEMO), "--model", str(tmp_path / "none.toml"), "-o", str(tmp_path / "r.pdf")], "model file"),
        (["report", str(DEMO), "-o", str(tmp_path / "no" / "r.pdf")], "does not exist"),
    ):
        assert main(argv) == 2                              # design.md: bad input exits 2 with one line
        err = capsys.readouterr().err.strip()
        assert err.startswith("gearbench: ") and "\n" not in err and words in err
    broken = tmp_path / "broken.json"
    broken.write_bytes(b'{"schema": "gearbench.session/1", ')
    assert main(["report", str(DEMO), "--session", str(broken), "-o", str(tmp_path / "r.html")]) == 2
    err = capsys.readouterr().err.strip()
    assert "\n" not in err and "damaged" in err and broken.read_bytes() == b'{"schema": "gearbench.session/1", '
    assert json.loads(json.dumps(err))                      # a plain one-line string
