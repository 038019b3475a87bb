"""Tests of the report figures and the self-contained HTML report.

References outside the project: the quadratic form of an ellipsoid (exact
algebra) and NumPy's eigen-decomposition for the section ellipses; the
angle between unit vectors (``numpy.arccos``) for the confidence cones;
the PNG file structure (signature, IHDR chunk and its CRC-32, checked with
``zlib.crc32`` from the standard library, and decoded by matplotlib's
Pillow reader); ``html.parser`` for what a browser sees; headless Chromium
when it is installed.
"""

import base64
import dataclasses
import html
import io
import shutil
import struct
import subprocess
import zlib
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from anisotropy.geometry import equal_area, frame_from_angles, line_to_vector
from anisotropy.report import figures as F

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # the PNG specification (ISO/IEC 15948), section 5.2


def _assert_png(data: bytes):
    assert data[:8] == PNG_SIGNATURE
    length, kind = struct.unpack(">I4s", data[8:16])
    assert kind == b"IHDR" and length == 13
    body = data[12:16 + length]
    crc = struct.unpack(">I", data[16 + length:20 + length])[0]
    # chunk CRC-32 over type + data (PNG specification, section 5.3), via zlib
    assert zlib.crc32(body) & 0xFFFFFFFF == crc
    width, height = struct.unpack(">II", data[16:24])
    import matplotlib.image as mpimg

    img = mpimg.imread(io.BytesIO(data), format="png")
    assert img.shape[:2] == (height, width) and width > 100 and height > 100
    # not a blank image
    assert float(np.ptp(img[..., :3])) > 0.2


# ---------------------------------------------------------------------------
# figure functions on plain arrays
# ---------------------------------------------------------------------------


def test_section_ellipse_lies_on_the_ellipsoid():
    R = frame_from_angles(35, 25, 40)
    r = np.array([120.0, 50.0, 12.0])
    e_u, e_v = np.array([1.0, 0, 0]), np.array([0, 1.0, 0])
    u, v = F.section_ellipse(R, r, e_u, e_v, n=73)
    pts = u[:, None] * e_u + v[:, None] * e_v
    # exact algebra: x^T R diag(1/r^2) R^T x = 1 on the ellipsoid surface
    Q = R @ np.diag(1 / r ** 2) @ R.T
    assert np.allclose(np.einsum("ni,ij,nj->n", pts, Q, pts), 1.0)
    # the section's semi-axes are 1/sqrt of the eigenvalues of the 2x2 restriction (NumPy eigh)
    B = np.stack([e_u, e_v], axis=1)
    lam = np.linalg.eigvalsh(B.T @ Q @ B)
    rad = np.hypot(u, v)
    assert rad.max() == pytest.approx(1 / np.sqrt(lam[0]), rel=1e-3)
    assert rad.min() == pytest.approx(1 / np.sqrt(lam[1]), rel=1e-2)


def test_section_of_a_flat_lying_ellipsoid_in_plan_is_major_by_semi():
    # major horizontal toward 030, minor vertical: the plan section has semi-axes
    # equal to the major and semi-major ranges (exact geometry)
    R = frame_from_angles(30, 0, 0)
    u, v = F.section_ellipse(R, [100.0, 40.0, 5.0], [1, 0, 0], [0, 1, 0], n=721)
    rad = np.hypot(u, v)
    assert rad.max() == pytest.approx(100.0, rel=1e-4)
    assert rad.min() == pytest.approx(40.0, rel=1e-4)
    k = int(np.argmax(rad))
    az = np.degrees(np.arctan2(u[k], v[k])) % 180
    assert az == pytest.approx(30.0, abs=0.5)


def test_small_circle_is_at_the_cone_radius():
    axis = line_to_vector(120.0, 35.0)
    pts = F._small_circle(axis, 17.0, n=50)
    ang = np.degrees(np.arccos(np.clip(pts @ axis, -1, 1)))
    assert np.allclose(ang, 17.0)


def test_figures_return_figures_and_write_pngs(tmp_path):
    rng = np.random.default_rng(3)
    R = frame_from_angles(50, 20, 10)
    axes = {k: R[:, i] for i, k in enumerate(("major", "semi_major", "minor"))}
    vals = rng.random((21, 25))
    fig = F.variogram_map_figure(vals, (-125, 125, -105, 105), np.full((21, 25), 4),
                                 ellipse=F.section_ellipse(R, [90, 40, 10], [1, 0, 0], [0, 1, 0]),
                                 path=tmp_path / "map.png", title="plan",
                                 xlabel="east (m)", ylabel="north (m)")
    ax = fig.axes[0]
    assert ax.get_xlabel() == "east (m)" and "100 pairs" in ax.get_title().replace(",", "")
    clouds = {k: v + 0.05 * rng.standard_normal((30, 3)) for k, v in axes.items()}
    fig = F.stereonet_figure(axes, clouds=clouds, cones={"major": 8, "semi_major": 20, "minor": 85},
                             interpreted={"major": line_to_vector(55, 25)},
                             interpreted_plane=R[:, 2], confidence=0.9, path=tmp_path / "net.png")
    labels = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    assert any(lab.startswith("major 050/20") for lab in labels)
    assert any("interpreted major 055/25" in lab for lab in labels)
    assert any("90 % cone" in lab for lab in labels)
    # the major marker sits at the equal-area projection of the axis (geometry.equal_area)
    x, y = equal_area(R[:, 0])
    lines = [ln for ln in fig.axes[0].get_lines() if ln.get_label().startswith("major 050")]
    assert np.allclose(lines[0].get_xydata()[0], [x, y])
    d = np.arange(1, 9) * 10.0
    curves = [{"label": k, "axis": k, "distance": d, "value": 1 - np.exp(-d / 30),
               "pairs": np.full(8, 40), "lo": 0.8 * (1 - np.exp(-d / 30)), "hi": 1 - np.exp(-d / 40),
               "model_distance": d, "model_value": 1 - np.exp(-d / 30)} for k in axes]
    curves.append({"label": "000/00", "distance": d, "value": 1 - np.exp(-d / 20),
                   "pairs": np.full(8, 9)})
    fig = F.directional_variograms_figure(curves, sill=1.0, path=tmp_path / "dir.png")
    assert len(fig.axes) == 4 and all(a.get_xlabel() == "lag distance (m)" for a in fig.axes)
    # the model seen by each lag's pairs is drawn as given (NaN lags left out), beside the
    # along-axis curve, both labelled
    seen = 1 - np.exp(-d / 25)
    seen[3] = np.nan
    curves[0].update(pair_model_value=seen, model_label="model along the axis")
    fig = F.directional_variograms_figure(curves, sill=1.0)
    dashed = [ln for ln in fig.axes[0].get_lines()
              if ln.get_label() == "model averaged over this lag's pairs"]
    assert len(dashed) == 1 and dashed[0].get_linestyle() == "--"
    keep = np.isfinite(seen)
    np.testing.assert_array_equal(dashed[0].get_xydata(), np.column_stack([d[keep], seen[keep]]))
    labels = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    assert "model along the axis" in labels and "model averaged over this lag's pairs" in labels
    rows = F.model_table_rows({"nugget": 0.2, "structures": [
        {"type": "spherical", "sill": 0.8, "ranges": {"major": 120, "semi_major": 60, "minor": 9}}]},
        {"major": {"trend": 50, "plunge": 20}})
    assert rows[0]["type"] == "nugget" and rows[0]["sill"] == "0.2"
    assert rows[1]["range major (m)"] == "120.0" and rows[1]["major trend/plunge"] == "050.0/20.0"
    F.model_table_figure(rows, path=tmp_path / "table.png")
    for name in ("map", "net", "dir", "table"):
        _assert_png((tmp_path / f"{name}.png").read_bytes())


# ---------------------------------------------------------------------------
# the HTML report of a real (small) discovery
# ---------------------------------------------------------------------------

EVIL_VALUE = "au & ag <script>alert(1)</script>"
EVIL_DOMAIN = "<img src=x onerror=alert(1)> & co"
EVIL_WARNING = "a warning that quotes <script>alert(1)</script> & more"


def _small_table():
    from anisotropy.models import NestedModel, Structure
    from anisotropy.simulate import simulate_field

    rng = np.random.default_rng(5)
    n_holes, per = 14, 10
    cx, cy = rng.uniform(0, 150, n_holes), rng.uniform(0, 150, n_holes)
    d = line_to_vector(rng.uniform(0, 360, n_holes), rng.uniform(55, 75, n_holes))
    pts = np.array([[cx[h], cy[h], 100.0] + (4.0 * j + 2.0) * d[h]
                    for h in range(n_holes) for j in range(per)])
    model = NestedModel(0.1, [Structure("spherical", 0.9, (90.0, 40.0, 15.0))],
                        frame_from_angles(60, 20, 30))
    g = np.round(np.exp(0.3 + 0.8 * simulate_field(pts, model, seed=2)), 3)
    return pd.DataFrame({"hole": [f"H{h}" for h in range(n_holes) for _ in range(per)],
                         "x": pts[:, 0], "y": pts[:, 1], "z": pts[:, 2], EVIL_VALUE: g,
                         "zone": EVIL_DOMAIN})


@pytest.fixture(scope="module")
def report_run(tmp_path_factory):
    """The discovery behind the report, and the report's path."""
    from anisotropy.check import Interpretation, check_interpretation
    from anisotropy.pipeline import discover
    from anisotropy.report.html import render_report

    df = _small_table()
    disc = discover(df, value=EVIL_VALUE, domain="zone", domain_value=EVIL_DOMAIN, hole="hole",
                    bootstrap=3, fan_spacing=12, seed=1)
    chk = check_interpretation(disc, Interpretation.from_plane(20, 70, 25))
    # a warning that quotes hostile text, as a warning quoting a column name would
    disc = dataclasses.replace(disc, warnings=[*disc.warnings, EVIL_WARNING])
    out = tmp_path_factory.mktemp("report")
    path = render_report(disc, out, check=chk, topcut=float(np.quantile(df[EVIL_VALUE], 0.98)))
    return disc, path


@pytest.fixture(scope="module")
def report(report_run):
    return report_run[1]


class _Page(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags, self.imgs, self.ids, self.text, self.refs = [], [], set(), [], []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append(tag)
        if "id" in a:
            self.ids.add(a["id"])
        if tag == "img":
            self.imgs.append(a)
        self.refs += [v for k, v in attrs if k in ("href", "src")]

    def handle_data(self, data):
        # runs of white space read as one space, as a browser shows them
        self.text.append(" ".join(data.split()))


def _parse(path):
    p = _Page()
    p.feed(Path(path).read_text(encoding="utf-8"))
    p.close()
    return p


def test_report_parses_and_every_figure_is_an_embedded_png(report):
    from anisotropy.report.html import REPORT_FIGURES

    page = _parse(report)
    assert page.tags[0] == "html" and "body" in page.tags
    for key in REPORT_FIGURES:
        assert f"fig-{key}" in page.ids, key
    assert len(page.imgs) == len(REPORT_FIGURES)
    for img in page.imgs:
        src = img["src"]
        assert src.startswith("data:image/png;base64,")
        data = base64.b64decode(src.split(",", 1)[1], validate=True)
        _assert_png(data)
    # the PNG files beside the report are the same images
    for key in REPORT_FIGURES:
        _assert_png((report.parent / "figures" / f"{key}.png").read_bytes())
    # self-contained: nothing fetched from elsewhere
    assert all(r.startswith("data:") for r in page.refs)
    assert "could not be drawn" not in report.read_text()


def test_report_content_and_escaping(report):
    page = _parse(report)
    text = " ".join(page.text)
    # html.parser sees the hostile value and domain names only as text
    assert "script" not in page.tags and page.tags.count("img") == len(page.imgs)
    assert all(img.get("onerror") is None for img in page.imgs)
    assert EVIL_VALUE in text and EVIL_DOMAIN in text and EVIL_WARNING in text
    # reference: html.escape of the Python standard library; the file holds the column name,
    # the domain name and the warning escaped (none has a quote character), and no script
    raw = report.read_text(encoding="utf-8")
    for s in (EVIL_VALUE, EVIL_DOMAIN, EVIL_WARNING):
        assert html.escape(s, quote=False) in raw, s
    assert f"<li class='warn'>{html.escape(EVIL_WARNING, quote=False)}</li>" in raw
    assert "<script>alert" not in raw and "<img src=x" not in raw
    for needed in ("JORC", "NI 43-101", "SAMREC", "PERC", "competent or qualified person",
                   "domaining", "Samples dropped or changed", "top-cut", "Transform",
                   "Model for estimation", "range major (m)", "Verdict", "Warnings",
                   "bootstrap", "averaged over each lag's own pairs", "exactly along"):
        assert needed in text, needed


def test_report_labels_lags_and_choices_with_units(report):
    import re

    text = " ".join(_parse(report).text)
    # lags by name with units, not the raw discovery.json keys
    for label in ("unit lag (m)", "number of lags", "lag tolerance (m)",
                  "longest lag distance (m)"):
        assert label in text, label
    assert "unit_lag" not in text and "max_distance" not in text
    # choice values to 4 significant figures with units; no 17-digit floats anywhere
    assert re.search(r"\d\.\d{6,}", text) is None
    assert re.search(r"unit lag \d[\d.]* m ", text)
    # transform keys as words; direction classes in words
    assert "normal_score.tails" not in text
    assert "across_hole" not in text and "across hole" in text


def test_templates_escape_every_value_as_text():
    import jinja2

    from anisotropy.report.templating import environment, png_data_uri

    env = environment()
    frame = env.from_string("<p title='{{ s }}'>{{ s }}</p><img alt=\"{{ s }}\">")
    for s in ("<script>alert(1)</script>", "a & b", "\"quoted\" & 'single'", "x'><b>y</b>",
              "../../<img src=x onerror=alert(1)>"):
        out = frame.render(s=s)
        if "'" not in s and '"' not in s:
            # reference: html.escape of the standard library (for quotes the two differ
            # only in spelling, &#34; against &quot;, so those go to the parser below)
            assert f">{html.escape(s, quote=False)}</p>" in out
        # reference: html.parser (what a browser reads): only the two elements, the
        # string back as text and as both attribute values
        p = _Page()
        p.feed(out)
        p.close()
        assert p.tags == ["p", "img"] and "".join(p.text) == " ".join(s.split())
        assert p.imgs[0]["alt"] == s
    # None prints as nothing; a name the template does not get is an error, not a blank
    assert env.from_string("[{{ v }}]").render(v=None) == "[]"
    with pytest.raises(jinja2.UndefinedError):
        env.from_string("{{ missing }}").render()
    # the one value marked safe: a PNG data URI, whose alphabet escaping would not change
    uri = png_data_uri(b"\x89PNG<&>'\"" * 3)
    assert str(uri) == html.escape(str(uri), quote=True)
    assert base64.b64decode(str(uri).split(",", 1)[1]) == b"\x89PNG<&>'\"" * 3


@pytest.mark.skipif(not (shutil.which("chromium") or Path("/usr/bin/chromium").exists()),
                    reason="Chromium is not installed")
def test_report_draws_in_headless_chromium(report, tmp_path):
    exe = shutil.which("chromium") or "/usr/bin/chromium"
    shot = tmp_path / "shot.png"
    proc = subprocess.run([exe, "--headless", "--no-sandbox", "--disable-gpu",
                           "--disable-background-networking", "--enable-logging=stderr", "--v=0",
                           f"--screenshot={shot}", "--window-size=1200,3000",
                           report.resolve().as_uri()],
                          capture_output=True, timeout=180)
    err = proc.stderr.decode(errors="replace")
    assert proc.returncode == 0, err[-2000:]
    # the page logs nothing to the console: no script error, no blocked (remote) resource;
    # a check of the CSP itself: Chromium logs a console line for a blocked remote image
    assert [ln for ln in err.splitlines() if ":CONSOLE" in ln] == []
    _assert_png(shot.read_bytes())


@pytest.mark.skipif(not (shutil.which("chromium") or Path("/usr/bin/chromium").exists()),
                    reason="Chromium is not installed")
def test_chromium_reports_a_blocked_remote_image(tmp_path):
    # the negative control of the test above: the same page frame with a remote image
    from anisotropy.report.templating import environment

    frame = environment().from_string(
        "{% extends 'base.html.j2' %}{% block body %}<p>x</p>"
        "<img src='http://192.0.2.1/x.png'>{% endblock %}")
    page = tmp_path / "remote.html"
    page.write_text(frame.render(title="t"), encoding="utf-8")
    exe = shutil.which("chromium") or "/usr/bin/chromium"
    proc = subprocess.run([exe, "--headless", "--no-sandbox", "--disable-gpu",
                           "--disable-background-networking", "--enable-logging=stderr", "--v=0",
                           f"--screenshot={tmp_path / 's.png'}", page.resolve().as_uri()],
                          capture_output=True, timeout=180)
    err = proc.stderr.decode(errors="replace")
    assert any(":CONSOLE" in ln and "Content Security Policy" in ln for ln in err.splitlines())


# ------------------------------------------------ issue 17, report details

def test_report_caution_once_audit_trail_rotation_and_no_code_paths(report):
    import re

    from anisotropy.report.style import CAUTION

    text = " ".join(_parse(report).text)
    # the caution appears once (any wording starting like it)
    assert text.count("Automated continuity suggestions") == 1 and CAUTION in text
    # audit trail in the header: UTC time, version, seed, input hash, options
    assert "(UTC)" in text and "seed 1" in text and "SHA-256" in text and "Options:" in text
    # rotation matrix with its layout, and the convention in words with its sign
    assert "Rotation matrix: columns are the major, semi-major and minor axes" in text
    assert "clockwise seen from above" in text and "counter-clockwise" in text
    # no function paths or record keys in text meant for people
    assert re.search(r"\banisotropy\.[a-z_]+\.", text) is None
    assert re.search(r"\bdiagnostics\.[a-z_]+", text) is None
    # a top-cut was applied in the fixture: the caption says so
    assert "the dashed line marks the top-cut applied" in text


def test_for_people_removes_code_paths():
    from anisotropy.report.html import _for_people

    assert _for_people("chosen by BIC with a minimum gain (see diagnostics.selection)") == \
        "chosen by BIC with a minimum gain"
    assert _for_people("then rotation (anisotropy.geometry.frame_from_angles)") == "then rotation"
    assert _for_people("plain words stay") == "plain words stay"


def test_model_table_marks_unresolved_and_extrapolated_ranges():
    from anisotropy.report.html import _range_marks

    d = {"model": {"nugget": 0.1, "structures": [
            {"type": "spherical", "sill": 0.9,
             "ranges": {"major": 150.0, "semi_major": 60.0, "minor": 20.0}}]},
         "lags": {"max_distance": 100.0},
         "diagnostics": {"unresolved_ranges": ["minor"], "unresolved_axes": []}}
    marks = _range_marks(d)
    # exact: 150 > 100 is beyond the longest lag; the minor range is unresolved
    assert marks == {(1, "major"): "†", (1, "minor"): "*"}
    rows = F.model_table_rows(d["model"], None, marks=marks)
    assert rows[1]["range major (m)"] == "150.0†" and rows[1]["range minor (m)"] == "20.0*"
    assert rows[1]["range semi-major (m)"] == "60.0"


def test_model_table_png_headings_fit_their_cells(tmp_path):
    # matplotlib's renderer extents as the reference: every heading's text box
    # lies inside its cell
    rows = F.model_table_rows({"nugget": 0.1, "structures": [
        {"type": "exponential", "sill": 0.9,
         "ranges": {"major": 123.4, "semi_major": 56.7, "minor": 8.9}}]})
    fig = F.model_table_figure(rows, title="t", path=tmp_path / "t.png")
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    renderer = canvas.get_renderer()
    table = fig.axes[0].tables[0]
    for (row, _col), cell in table.get_celld().items():
        if row != 0:
            continue
        box = cell.get_window_extent(renderer)
        tb = cell.get_text().get_window_extent(renderer)
        assert tb.x0 >= box.x0 - 0.5 and tb.x1 <= box.x1 + 0.5, cell.get_text().get_text()
        assert tb.y0 >= box.y0 - 0.5 and tb.y1 <= box.y1 + 0.5, cell.get_text().get_text()


def test_directional_panels_state_their_angular_tolerance():
    d = np.array([10.0, 20.0, 30.0])
    curves = [{"label": a, "axis": a, "distance": d, "value": d / 30, "pairs": np.ones(3) * 50,
               "angular_tolerance": 15.0} for a in ("major", "semi_major", "minor")]
    curves.append({"label": "000/00", "axis": None, "distance": d, "value": d / 30,
                   "pairs": np.ones(3) * 40, "angular_tolerance": 15.0})
    fig = F.directional_variograms_figure(curves)
    titles = [ax.get_title() for ax in fig.axes]
    assert sum("cone ±15°" in t for t in titles) == 4


def test_units_are_the_runs_own(report_run):
    # the report states the units the discovery recorded for its estimator and transform
    # (the record's units are checked per estimator in test_discover.py)
    disc, path = report_run
    units = disc.diagnostics["units"]
    assert "normal-score" in units            # auto chose normal scores for these grades
    assert units in " ".join(_parse(path).text)


def test_report_gives_the_model_in_grade_units(report):
    # the fixture's grades are lognormal, so auto chose normal scores
    text = " ".join(_parse(report).text)
    assert "Model in grade units" in text and "Hermite" in text
    assert "Checked against the direct grade variogram down the holes" in text


def test_report_draws_the_downhole_variogram_from_the_record(report):
    # the fixture's samples are in holes with 4 m spacing: the record has down-hole lags
    page = _parse(report)
    text = " ".join(page.text)
    assert "fig-downhole" in page.ids and "Nugget from the down-hole variogram" in text
    assert "Dashed: the straight line through the first two points" in text
    assert "4 m composites" in text
    _assert_png((report.parent / "figures" / "downhole.png").read_bytes())


def test_downhole_figure_of_a_record_draws_only_the_record():
    from anisotropy.report.html import _fig_downhole, _section_downhole

    # a record as discovery.json holds it (JSON lists), nugget held in the fit
    pts = [[3.1, 0.35, 420], [6.05, 0.47, 380], [9.0, 0.58, 300]]
    slope, icpt = np.polyfit([3.1, 6.05], [0.35, 0.47], 1)     # NumPy, outside reference
    d = {"model": {"nugget": icpt, "total_sill": 1.0, "structures": []},
         "diagnostics": {"downhole": {"composite": 3.0, "points": pts, "nugget": icpt},
                         "choices": [{"choice": "nugget", "value": icpt, "reason": "..."}]}}
    fig = _fig_downhole(d, None, "semivariogram (normal-score units)")
    ax = fig.axes[0]
    (line,) = [ln for ln in ax.get_lines() if ln.get_linestyle() == "--"]
    x, y = line.get_data()
    np.testing.assert_allclose(y, np.polyval([slope, icpt], x), atol=1e-12)
    # every recorded point is drawn, where the record puts it
    np.testing.assert_allclose(ax.collections[0].get_offsets(), [p[:2] for p in pts])
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert any("held at the down-hole nugget" in s for s in labels)
    assert "3 m composites" in ax.get_title() and ax.get_ylabel().endswith("units)")
    sec = _section_downhole(d)
    assert sec["drawn"] and f"down-hole nugget of {icpt:.3g}" in sec["text"]
    assert "held at that value" in sec["text"]
    # without drill holes the record has no down-hole lags: nothing drawn, and said so
    assert _fig_downhole({"diagnostics": {"downhole": None}}, None, "x") is None
    sec = _section_downhole({"diagnostics": {}})
    assert not sec["drawn"] and "not in drill holes" in sec["text"]


def test_uncertainty_table_says_where_each_cone_comes_from():
    from anisotropy.report.html import _uncertainty
    gap = {"gap_deg": 12.4, "allowed_deg": 5.0, "within": False}
    unc = {"method": "block", "replicates": 60, "confidence": 0.9,
           "major": {"cone_deg": 20.0, "cone_source": "replicates", "variogram_gap": gap},
           "semi_major": {"cone_deg": 8.0, "cone_source": "likelihood information"},
           "minor": {"cone_deg": 3.0, "cone_source": "replicates"}}
    text = str(_uncertainty(unc)["table"])
    assert "differ by 12°, more than their spreads allow" in text
    assert "likelihood information" in text
    assert text.count("differ by") == 1       # the minor's replicates cone had no gap test


def test_uncertainty_table_names_the_least_cone_and_a_rival_widening():
    # cone_source "unresolved direction" (BootstrapResult.open_axes) is said with the
    # replicates' own width; a cone widened to a rival frame says so before its base
    from anisotropy.report.html import _uncertainty
    rival = ("widened to 61 degrees to hold a rival frame the likelihood cannot tell "
             "from this one (31.2 degrees away) and a cone as wide around it")
    unc = {"method": "block", "replicates": 60, "confidence": 0.9,
           "major": {"cone_deg": 61.2, "cone_source": "unresolved direction",
                     "replicate_cone_deg": 19.0, "cone_note": rival, "cone_rival_deg": 31.2},
           "semi_major": {"cone_deg": 8.0, "cone_source": "likelihood information"},
           "minor": {"cone_deg": 30.0, "cone_source": "unresolved direction",
                     "replicate_cone_deg": 3.0, "cone_note": "widened from 3 to 30 degrees"}}
    text = str(_uncertainty(unc)["table"])
    assert text.count("the least cone of an unresolved direction") == 2
    assert "replicates gave 19°" in text and "replicates gave 3°" in text
    assert text.count("rival frame") == 1
