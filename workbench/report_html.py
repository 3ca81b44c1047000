"""The report as HTML: one text for the self-contained HTML file and for the PDF.

Only a plain subset of HTML is used (headings, paragraphs, lists, tables with the
``border`` attribute, images with a width) so that Qt's ``QTextDocument`` prints
it to PDF as it is.  Every piece of text that comes from the user or from a file
goes through :func:`html.escape`; nothing else is ever inserted.
"""

from __future__ import annotations

import base64
import html
import math
from pathlib import Path
from typing import Any, Callable

from workbench.report import (CAUTIONS, OVERALL_MEANINGS, SUSPECTS_LABEL, TSA_MEANINGS, ReportImage, ReportInput,
                              recording_date)

IMAGE_WIDTH_PX = 640
SPEED_SOURCES = {"tach": "measured by the tach", "nominal": "nominal speed (no tach)",
                 "estimated": "estimated from the vibration around the nominal speed"}
STYLE = """
body { font-family: sans-serif; font-size: 10pt; color: #1A1A1A; max-width: 60em; margin: 1.5em auto; }
h1 { font-size: 17pt; } h2 { font-size: 13pt; margin-top: 1.2em; border-bottom: 1px solid #999; }
table { border-collapse: collapse; margin: 0.4em 0; } th { background: #E8E8E8; text-align: left; }
td, th { padding: 2px 6px; } td.num { text-align: right; } p.caution { color: #5A3A00; }
p.label { font-style: italic; } img { border: 1px solid #BBB; }
"""


def esc(value: Any) -> str:
    """Text of any value, HTML-escaped (quotes included)."""
    return html.escape("" if value is None else str(value), quote=True)


def num(value: Any, fmt: str = ".4g") -> str:
    if value is None or isinstance(value, bool):
        return "-" if value is None else ("yes" if value else "no")
    try:
        v = float(value)
    except (TypeError, ValueError):
        return esc(value)
    return "-" if not math.isfinite(v) else format(v, fmt)


def data_uri(image: ReportImage) -> str:
    return "data:image/png;base64," + base64.b64encode(image.png).decode("ascii")


def _table(header: list[str] | None, rows: list[list[str]], numeric: set[int] = frozenset()) -> str:
    """A table; ``rows`` hold text that is ALREADY escaped (or numbers formatted here)."""
    out = ['<table border="1" cellspacing="0" cellpadding="3">']
    if header:
        out.append("<tr>" + "".join(f"<th>{h}</th>" for h in header) + "</tr>")
    for row in rows:
        cells = "".join(f'<td class="num" align="right">{c}</td>' if i in numeric else f"<td>{c}</td>"
                        for i, c in enumerate(row))
        out.append(f"<tr>{cells}</tr>")
    out.append("</table>")
    return "\n".join(out)


def _paragraphs(text: str) -> str:
    blocks = [b.strip() for b in str(text).replace("\r\n", "\n").split("\n\n")]
    return "\n".join(f"<p>{esc(b).replace(chr(10), '<br>')}</p>" for b in blocks if b)


def report_html(inp: ReportInput, *, image_src: Callable[[int, ReportImage], str] | None = None,
                standalone: bool = True) -> str:
    """The report as HTML text.

    Parameters
    ----------
    inp : ReportInput
    image_src : callable, optional
        ``image_src(index, image) -> src`` for each picture; ``data:`` URIs by default.
    standalone : bool
        Include the ``<style>`` block (the PDF path leaves it out).
    """
    a = inp.analysis
    image_src = image_src or (lambda _i, image: data_uri(image))
    model = a.model
    rec = a.recording
    sensor = rec.get("sensor") or {}
    index = getattr(a.settings, "sensor_index", 0)
    model_sensor = model.sensors[index] if 0 <= index < len(model.sensors) else None
    speed = a.speed
    title = f"Vibration report: {model.name or 'gearbox'}"
    parts = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">', f"<title>{esc(title)}</title>"]
    if standalone:
        parts.append(f"<style>{STYLE}</style>")
    parts.append("</head><body>")
    parts.append(f"<h1>{esc(title)}</h1>")
    parts.append(f"<p>Written {esc(inp.created_utc)} by gearbench {esc(_version())}"
                 + (f" from the session {esc(inp.session_path)}" if inp.session_path else "") + ".</p>")

    # -- facts
    parts.append("<h2>Machine and measurement</h2>")
    t0, t1 = rec.get("t_start_s"), rec.get("t_end_s")
    facts = [
        ("Machine (model)", esc(model.name)),
        ("Sensor", esc(sensor.get("name")) + f" on channel {esc(sensor.get('channel'))} ({esc(sensor.get('units'))})"),
        ("Sensor location", esc(getattr(model_sensor, "location", "") or "not given")),
        ("Sensor direction", esc(getattr(model_sensor, "direction", "") or "not given")),
        ("Recording file", esc(rec.get("path"))),
        ("SHA-256", esc(rec.get("sha256"))),
        ("File date", esc(recording_date(rec.get("path", "")))),
        ("Length", f"{num(rec.get('duration_s'), '.2f')} s at {num(rec.get('sample_rate_hz'), 'g')} Hz"
                   + (f"; analysed {num(t0, '.2f')} to {num(t1, '.2f')} s" if t0 is not None else "")),
        ("Speed", f"shaft {esc(speed.shaft)}: {num(60.0 * speed.mean_hz, '.1f')} rpm ({num(speed.mean_hz, '.3f')} Hz), "
                  f"range {num(60.0 * speed.min_hz, '.1f')} to {num(60.0 * speed.max_hz, '.1f')} rpm, "
                  + esc(SPEED_SOURCES.get(speed.source, speed.source))),
    ]
    parts.append(_table(None, [[f"<b>{k}</b>", v] for k, v in facts]))
    if inp.recording_changed:
        parts.append('<p class="caution"><b>The recording changed since the session was saved.</b> '
                     "The snapshots may show another version of the data.</p>")
    for note in inp.notes:
        parts.append(f'<p class="caution">{esc(note)}</p>')
    for warning in getattr(a, "warnings", ()) or ():
        parts.append(f'<p class="caution">Analysis warning: {esc(warning)}</p>')

    # -- model and frequencies
    parts.append("<h2>Gear-train model</h2>")
    parts.append("<ul>" + "".join(f"<li>{line}</li>" for line in _model_lines(model)) + "</ul>")
    table = a.frequencies
    parts.append(f"<p>Frequencies at the mean speed of shaft {esc(table.reference_shaft)} "
                 f"({num(table.reference_hz, '.4g')} Hz); orders are multiples of that shaft's rate.</p>")
    parts.append(_table(["Frequency", "Hz", "CPM", "Order", "Kind"],
                        [[esc(r.label), num(r.hz, ".4f"), num(60.0 * r.hz, ".1f"), num(r.order, ".4f"), esc(r.kind)]
                         for r in table.rows], numeric={1, 2, 3}))

    # -- indicators
    parts.append("<h2>Overall indicators</h2>")
    units = esc(sensor.get("units", ""))
    overall = a.overall
    rows = []
    for key, meaning in OVERALL_MEANINGS.items():
        if key in overall:
            unit = "mm/s" if key.endswith("_mm_s") else (units if key in ("rms", "peak") else "")
            rows.append([esc(key.replace("_mm_s", "").replace("_", " ")), num(overall[key]), unit, esc(meaning)])
    parts.append(_table(["Indicator", "Value", "Units", "What it means"], rows, numeric={1}))
    if overall.get("clipped"):
        parts.append('<p class="caution">The signal is clipped: impacts and kurtosis are understated.</p>')
    severity = inp.severity if _is_zone(inp.severity) else _severity(a)
    if severity is not None:
        parts.append(f"<p><b>Severity zone (ISO 20816-3):</b> {esc(severity.summary())}</p>")

    parts.append("<h2>Indicators per shaft (time-synchronous average)</h2>")
    keys = list(TSA_MEANINGS)
    parts.append(_table(["Shaft", "Revs"] + [k.upper() if k != "kurtosis" else "Kurtosis" for k in keys],
                        [[esc(t.shaft), str(t.n_revs)] + [num(t.indicators.get(k)) for k in keys] for t in a.tsa],
                        numeric=set(range(1, 2 + len(keys)))))
    parts.append("<ul>" + "".join(f"<li><b>{esc(k.upper() if k != 'kurtosis' else 'Kurtosis')}</b>: {esc(m)}</li>"
                                  for k, m in TSA_MEANINGS.items()) + "</ul>")

    # -- sidebands
    parts.append("<h2>Sideband ownership</h2>")
    if a.sidebands:
        parts.append("<p>Each family of sidebands around a mesh harmonic is spaced by the rate of the shaft that "
                     "modulates it; that shaft owns the family.</p>")
        parts.append(_table(["Mesh", "Harmonic", "Carrier Hz", "Owner shaft", "Spacing Hz", "Clear sidebands",
                             "SI", "SLF"],
                            [[esc(f.mesh), str(f.harmonic), num(f.carrier_hz, ".2f"), esc(f.owner_shaft or "none"),
                              num(f.spacing_hz, ".3f"), str(f.n_found), num(f.sideband_index), num(f.sideband_level_factor)]
                             for f in a.sidebands], numeric={1, 2, 4, 5, 6, 7}))
    else:
        parts.append("<p>No sideband families were measured.</p>")

    # -- suspects
    parts.append(f"<h2>Suspects ({esc(SUSPECTS_LABEL)})</h2>")
    parts.append(f'<p class="label">The ranking below is {esc(SUSPECTS_LABEL)}. A score ranks suspects; '
                 "it is not a probability.</p>")
    if a.suspects:
        parts.append("<ol>")
        for s in a.suspects:
            evidence = "".join(f"<li>{esc(e)}</li>" for e in s.evidence)
            parts.append(f"<li><b>{esc(s.component)}</b>: {esc(s.kind)} (score {num(s.score, '.2f')}, "
                         f"best seen on the {esc(s.view)} view)<ul>{evidence}</ul></li>")
        parts.append("</ol>")
    else:
        parts.append("<p>No component passes the alarm threshold.</p>")

    # -- pictures
    parts.append("<h2>Pictures</h2>")
    if not inp.images:
        parts.append("<p>No pictures.</p>")
    for i, image in enumerate(inp.images):
        parts.append(f"<h3>Figure {i + 1}. {esc(image.title)}</h3>")
        parts.append(f'<p><img src="{esc(image_src(i, image))}" width="{IMAGE_WIDTH_PX}" alt="{esc(image.title)}"></p>')
        if image.caption:
            parts.append(f"<p><b>Caption:</b> {esc(image.caption)}</p>")
        if image.notes:
            parts.append("<p><b>Notes on the picture:</b></p><ul>"
                         + "".join(f"<li>{esc(n)}</li>" for n in image.notes) + "</ul>")

    # -- findings
    parts.append("<h2>Findings and recommendation</h2>")
    parts.append(_paragraphs(inp.findings) if inp.findings.strip()
                 else "<p>The analyst has not written findings.</p>")

    # -- cautions
    parts.append("<h2>Cautions</h2>")
    cautions = list(CAUTIONS) + ([severity.caution] if severity is not None else [])
    parts.append("<ul>" + "".join(f'<li><p class="caution">{esc(c)}</p></li>' for c in cautions) + "</ul>")
    parts.append("</body></html>")
    return "\n".join(parts)


def _model_lines(model: Any) -> list[str]:
    lines = []
    for s in model.sensors:
        lines.append(f"Sensor {esc(s.name)}: channel {s.channel}, scale {num(s.scale, 'g')} {esc(s.units)} per unit"
                     + (f", {esc(s.location)}" if s.location else "") + (f", {esc(s.direction)}" if s.direction else ""))
    t = model.tach
    if t.channel is not None:
        lines.append(f"Tach on channel {t.channel}, watching shaft {esc(t.shaft)}, {t.pulses_per_rev} pulse(s) per revolution")
    else:
        lines.append(f"No tach: nominal speed {num(t.nominal_rpm, 'g')} rpm of shaft {esc(t.shaft)}")
    lines.append("Shafts: " + ", ".join(esc(n) for n in model.shaft_names()))
    for m in model.meshes:
        lines.append(f"Mesh {esc(m.name)}: {esc(m.driver)} ({m.driver_teeth} teeth) drives {esc(m.driven)} "
                     f"({m.driven_teeth} teeth)")
    for p in getattr(model, "planetary", ()) or ():
        lines.append(f"Planetary stage {esc(p.name)}: sun {p.sun_teeth} teeth on {esc(p.sun_shaft)}, "
                     f"{p.planets} planets of {p.planet_teeth} teeth, ring {p.ring_teeth} teeth (fixed), "
                     f"carrier {esc(p.carrier_shaft)}")
    for b in getattr(model, "bearings", ()) or ():
        lines.append(f"Bearing {esc(b.name)} on {esc(b.shaft)}: {b.rolling_elements} rolling elements, "
                     f"d = {num(b.element_diameter_mm, 'g')} mm, D = {num(b.pitch_diameter_mm, 'g')} mm, "
                     f"contact angle {num(b.contact_angle_deg, 'g')} deg")
    return lines


def _is_zone(zone: Any) -> bool:
    return hasattr(zone, "summary") and hasattr(zone, "caution")


def _severity(analysis: Any) -> Any:
    """The severity zone the analysis carries, if any (shown with its caution)."""
    zone = getattr(analysis, "severity", None)
    if zone is None:
        zone = (getattr(analysis, "extras", None) or {}).get("severity")
    return zone if _is_zone(zone) else None


def _version() -> str:
    from dsp import __version__

    return __version__


def write_html(inp: ReportInput, path: str | Path) -> Path:
    """Write the self-contained HTML report (pictures as ``data:`` URIs), atomically."""
    from workbench.session_store import atomic_write_text

    return atomic_write_text(path, report_html(inp))


__all__ = ["report_html", "write_html", "esc", "data_uri"]
