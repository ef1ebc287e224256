"""The report and a sheet in a real headless Chromium (Debian `chromium`, driven by Playwright).

Checks: the page loads from file:// with no console error and no request other than the file
itself, the front renders one marker per candidate, clicking a marker redraws the cross-section and
the strain profile with that candidate's figures (compared with front.json), the table sorts, and a
sheet prints on at most two A4 pages. Screenshots land in pytest's tmp_path for a look after a failure.
The same checks run on the hand-made fixture and on a real `strainline solve` run of a shipped study,
whose sheets must also copy every front.json number exactly and which `strainline report` must
rebuild byte for byte.
"""
from __future__ import annotations

import json
import re
import shutil
import tempfile
from html import unescape
from pathlib import Path

import pandas as pd
import pytest

from strainline.optimizer.cli.main import main
from strainline.optimizer.outputs.report import figure, write_all

FIXTURE = Path(__file__).parent / "fixtures" / "front_small.json"
#: a shipped study with a differential (coupled) line, the most elaborate drawing
SOLVED_STUDY = Path(__file__).resolve().parents[1] / "studies" / "gimbal-camera-tail.yaml"
UNBONDED_BASE = Path(__file__).resolve().parents[1] / "studies" / "handheld-scanner-hinge.yaml"
CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
        "--no-first-run", "--disable-sync"]


@pytest.fixture(scope="module")
def browser_ctx():
    from playwright.sync_api import sync_playwright

    profile = tempfile.mkdtemp(prefix="strainline-chromium-")
    with sync_playwright() as p:
        ctx = p.chromium.launch_persistent_context(profile, executable_path=CHROMIUM, headless=True, args=ARGS,
                                                   viewport={"width": 1300, "height": 900})
        try:
            yield ctx
        finally:
            ctx.close()
    shutil.rmtree(profile, ignore_errors=True)


@pytest.fixture(scope="module", params=["fixture", "solved", "unbonded"])
def built(request, tmp_path_factory):
    """Reports built from the hand-made fixture and from real `strainline solve` runs: a shipped study,
    and the shipped hinge study turned into a 4-copper unbonded bend (air gaps, one neutral axis per leaf)."""
    out = tmp_path_factory.mktemp(request.param)
    if request.param == "fixture":
        front = json.loads(FIXTURE.read_text(encoding="utf-8"))
        shutil.copy(FIXTURE, out / "front.json")
        write_all(front, out)
        return out, front
    study = SOLVED_STUDY
    args = ["--budget", "500"]
    if request.param == "unbonded":
        text = UNBONDED_BASE.read_text(encoding="utf-8")
        assert "region: bonded" in text and "copper_layers: 2" in text and "total_thickness_um: 200" in text
        study = tmp_path_factory.mktemp("unbonded-study") / "unbonded.yaml"   # the output folder holds outputs only
        study.write_text(text.replace("region: bonded", "region: unbonded").replace(
            "copper_layers: 2", "copper_layers: 4").replace(   # room for a cover on every leaf
            "total_thickness_um: 200", "total_thickness_um: 400"), encoding="utf-8")
        args = ["--budget", "800", "--method", "evolutionary"]
    assert main(["solve", str(study), "--out", str(out), *args, "--quiet"]) == 0
    front = json.loads((out / "front.json").read_text(encoding="utf-8"))
    assert front["candidates"]
    if request.param == "unbonded":
        assert any(isinstance(c["bend"]["neutral_axis_um"], list) for c in front["candidates"])
    return out, front


def _open(ctx, url):
    page = ctx.new_page()
    log = {"errors": [], "requests": []}
    page.on("console", lambda m: log["errors"].append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: log["errors"].append(str(e)))
    page.on("requestfailed", lambda r: log["errors"].append(f"failed: {r.url}"))
    page.on("request", lambda r: log["requests"].append(r.url))
    page.goto(url)
    page.wait_for_function("window.strainline && window.strainline.renders > 0", timeout=30000)
    return page, log


def test_report_loads_offline_and_selecting_updates_plots(browser_ctx, built, tmp_path):
    out, front = built
    url = (out / "report.html").as_uri()
    page, log = _open(browser_ctx, url)
    try:
        n = len(front["candidates"])
        # the front plot is drawn: one marker per candidate in the candidates trace
        idx = page.evaluate("document.getElementById('front').data.findIndex(t => t.name === 'candidates')")
        assert idx >= 0
        n_points = page.evaluate(
            f"document.querySelectorAll('#front .scatterlayer .trace')[{idx}].querySelectorAll('.point').length")
        assert n_points == n
        # click the marker of a candidate that is not selected now
        start = page.evaluate("window.strainline.state.selected")
        centres = page.evaluate(
            f"[...document.querySelectorAll('#front .scatterlayer .trace')[{idx}].querySelectorAll('.point')]"
            ".map(p => { const r = p.getBoundingClientRect(); return [r.x + r.width / 2, r.y + r.height / 2]; })")
        # the marker standing furthest from every other one (points may coincide in a 2-D view)
        def clearance(i):
            return min(((centres[i][0] - c[0]) ** 2 + (centres[i][1] - c[1]) ** 2) ** 0.5
                       for j, c in enumerate(centres) if j != i)
        k = max((i for i in range(n) if i != start), key=clearance)
        assert clearance(k) > 12
        page.mouse.click(*centres[k])
        page.wait_for_function(f"window.strainline.state.selected === {k}", timeout=10000)
        cand = front["candidates"][k]
        assert cand["id"] in page.evaluate("document.getElementById('section').layout.title.text")
        assert cand["id"] in page.evaluate("document.getElementById('strain').layout.title.text")
        assert cand["id"] in page.inner_text("#cand-title")
        # the strain profile shows this candidate's face strains (front.json values, exactly)
        xs = page.evaluate("document.getElementById('strain').data.map(t => t.x)")
        want = [[lay["strain_bottom_pct"], lay["strain_top_pct"]] for lay in cand["layers"]
                if lay["thickness_um"] > 0 and lay["kind"] != "air-gap"]
        assert xs == want
        # the cross-section is to scale and the signal trace has the solved width
        lay = page.evaluate("document.getElementById('section').layout.yaxis")
        assert lay["scaleanchor"] == "x" and lay["scaleratio"] == 1
        sigs = page.evaluate("document.getElementById('section').data.filter(t => t.name === 'signal').map(t => t.x)")
        assert len(sigs) == (2 if "coupled" in cand["line"]["type"] else 1)
        for sig in sigs:
            assert max(sig) - min(sig) == pytest.approx(cand["line"]["width_um"], rel=1e-12)
        if len(sigs) == 2:                    # the pair's edge-to-edge gap, drawn to scale
            edges = sorted([min(sigs[0]), max(sigs[0]), min(sigs[1]), max(sigs[1])])
            assert edges[2] - edges[1] == pytest.approx(cand["line"]["gap_um"], rel=1e-12)
        na = page.evaluate("document.getElementById('section').layout.shapes.map(s => s.y0)")
        want_na = cand["bend"]["neutral_axis_um"]
        assert na == (want_na if isinstance(want_na, list) else [want_na])
        # per-layer table follows the selection
        rows = page.locator("#layer-table tbody tr").count()
        assert rows == len(cand["layers"])
        page.screenshot(path=str(tmp_path / "report-selected.png"), full_page=True)
        assert (tmp_path / "report-selected.png").stat().st_size > 10_000

        # sortable table: total thickness ascending, then descending
        page.click("#cand-table thead th[data-k='total_thickness_um']")
        col = page.evaluate("[...document.querySelectorAll('#cand-table thead th')].findIndex(th => th.dataset.k === 'total_thickness_um')")
        thick = [figure(c, "total_thickness_um")[0] for c in front["candidates"]]
        rows_v = f"[...document.querySelectorAll('#cand-table tbody tr')].map(r => Number(r.children[{col}].dataset.v))"
        assert page.evaluate(rows_v) == sorted(thick)
        page.click("#cand-table thead th[data-k='total_thickness_um']")
        assert page.evaluate(rows_v) == sorted(thick, reverse=True)
        # clicking a table row selects too
        page.click("#cand-table tbody tr:nth-child(1) td:nth-child(1)")
        first = page.evaluate("Number(document.querySelector('#cand-table tbody tr').dataset.i)")
        assert thick[first] == max(thick)
        page.wait_for_function(f"window.strainline.state.selected === {first}", timeout=10000)
        # objective-pair toggle (three or more objectives here) changes the front's axes
        titles = "['xaxis', 'yaxis'].map(a => document.getElementById('front').layout[a].title.text)"
        before = page.evaluate(titles)
        page.click("#pair-buttons button:not(.on)")
        after = page.evaluate(titles)
        assert after != before
        assert page.locator("#pair-buttons button.on").count() == 1
        # parallel coordinates drawn once scrolled into view, one axis per varying decision variable
        page.locator("#parcoords").scroll_into_view_if_needed()
        page.wait_for_function("document.querySelectorAll('#parcoords .y-axis').length >= 2", timeout=30000)
        n_dims = page.evaluate("document.getElementById('parcoords').data[0].dimensions.length")
        assert n_dims == len(page.evaluate("window.strainline.data.decisions")) >= 2
        # cautions in plain view
        text = page.inner_text("#cautions")
        assert "IPC-TM-650" in text and "IPC-2223" in text and "IPC-6013" in text and "concept" in text
    finally:
        page.close()
    assert log["errors"] == []
    assert log["requests"] and all(u.startswith("file://") for u in log["requests"]), log["requests"]


def test_sheet_loads_and_prints_on_two_pages_at_most(browser_ctx, built, tmp_path):
    out, front = built
    cid = front["candidates"][0]["id"]
    page = browser_ctx.new_page()
    errors, requests = [], []
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.on("request", lambda r: requests.append(r.url))
    try:
        page.goto((out / "handoff" / f"{cid}.html").as_uri())
        page.screenshot(path=str(tmp_path / "sheet.png"), full_page=True)
        pdf = page.pdf(format="A4", print_background=True)
    finally:
        page.close()
    (tmp_path / "sheet.pdf").write_bytes(pdf)
    pages = pdf.count(b"/Type /Page") - pdf.count(b"/Type /Pages")
    assert 1 <= pages <= 2, pages
    assert errors == []
    assert all(u.startswith("file://") for u in requests)


def _resolve(cand, key):
    node = cand
    for part in key.split("."):
        m = re.fullmatch(r"(\w+)\[(\d+)\]", part)
        node = node[m.group(1)][int(m.group(2))] if m else node[part]
    return node


def test_sheets_copy_front_json_numbers_exactly(built):
    """Every keyed CSV value and every keyed HTML cell of every sheet equals front.json's field."""
    out, front = built
    checked = 0
    for cand in front["candidates"]:
        df = pd.read_csv(out / "handoff" / f"{cand['id']}.csv", dtype=str, keep_default_na=False)
        html = (out / "handoff" / f"{cand['id']}.html").read_text(encoding="utf-8")
        pairs = list(zip(df.loc[df["key"] != "", "key"], df.loc[df["key"] != "", "value"]))
        pairs += [(k, unescape(v)) for k, v in re.findall(r'data-key="([^"]+)" data-value="([^"]*)"', html)]
        for key, text in pairs:
            want = _resolve(cand, key)
            if isinstance(want, bool):
                assert text == ("true" if want else "false"), (cand["id"], key)
            elif isinstance(want, (int, float)):
                assert float(text) == float(want), (cand["id"], key, text, want)
            else:
                assert text == str(want), (cand["id"], key, text, want)
            checked += 1
        for key in ("line.width_um", "bend.inner_radius_mm"):
            assert key in dict(pairs)
    assert checked > 40 * len(front["candidates"])


def test_report_command_rebuilds_the_same_files(built, tmp_path):
    """`strainline report` on a copy of the folder reproduces report.html and every sheet byte for byte."""
    out, front = built
    copy = tmp_path / "copy"
    copy.mkdir()
    shutil.copy(out / "front.json", copy / "front.json")
    assert main(["report", str(copy), "--quiet"]) == 0
    assert (copy / "report.html").read_bytes() == (out / "report.html").read_bytes()
    names = sorted(p.name for p in (out / "handoff").iterdir())
    assert names == sorted(p.name for p in (copy / "handoff").iterdir())
    for name in names:
        assert (copy / "handoff" / name).read_bytes() == (out / "handoff" / name).read_bytes(), name


# ----------------------------------------------------------------------------- injection
#: every placeholder of the old string-replaced template, Jinja syntax, and markup that would run if
#: pasted into the page unescaped
OLD_PLACEHOLDERS = ["%%TITLE%%", "%%CSS%%", "%%CAUTION%%", "%%CONVENTION%%", "%%SEARCH%%", "%%STUDY%%",
                    "%%PLOTLY%%", "%%DATA%%", "%%APP%%"]
HOSTILE_DESCRIPTION = (" ".join(OLD_PLACEHOLDERS) + " {{ 7 * 7 }} {% if true %}x{% endif %} "
                       "</script><script>window.__pwned = 'description'</script>"
                       "<img src=x onerror=\"window.__pwned = 'img'\"> \u2028 <!-- -->")
HOSTILE_LAYER = "</script><svg onload=\"window.__pwned = 'layer'\"></svg>"
HOSTILE_KEY = "<img src=x onerror=alert(1)>"
HOSTILE_MATERIAL = "\"><img src=x onerror=alert(2)>"


@pytest.fixture(scope="module")
def tampered(tmp_path_factory):
    """A front.json tampered by hand (hostile description, objective key, layer name, material and search
    key), turned into a report by `strainline report`."""
    out = tmp_path_factory.mktemp("tampered")
    front = json.loads(FIXTURE.read_text(encoding="utf-8"))
    front["study"]["description"] = HOSTILE_DESCRIPTION
    front["study"]["name"] = "%%DATA%% </title><script>window.__pwned = 'name'</script>"
    front["search"][HOSTILE_KEY] = HOSTILE_LAYER
    for c in front["candidates"]:
        c["objectives"][HOSTILE_KEY] = c["objectives"].pop("loss_db_per_m")
        c["layers"][0]["name"] = HOSTILE_LAYER
    front["candidates"][1]["layers"][1]["material"] = HOSTILE_MATERIAL
    for d in front["dominated"]:
        d["objectives"][HOSTILE_KEY] = d["objectives"].pop("loss_db_per_m", None)
    (out / "front.json").write_text(json.dumps(front), encoding="utf-8")
    assert main(["report", str(out), "--quiet"]) == 0
    return out, front


def _hostile_page(ctx, url):
    page = ctx.new_page()
    log = {"errors": [], "dialogs": []}
    page.on("pageerror", lambda e: log["errors"].append(str(e)))
    page.on("dialog", lambda d: (log["dialogs"].append(d.message), d.dismiss()))
    page.goto(url)
    return page, log


def test_hostile_front_json_text_shows_literally_and_runs_nothing(browser_ctx, tampered):
    out, front = tampered
    page, log = _hostile_page(browser_ctx, (out / "report.html").as_uri())
    try:
        page.wait_for_function("window.strainline && window.strainline.renders > 0", timeout=30000)
        for i in range(len(front["candidates"])):          # draw every candidate, the parallel coordinates too
            page.evaluate(f"window.strainline.select({i})")
        page.locator("#parcoords").scroll_into_view_if_needed()
        page.wait_for_function("document.querySelectorAll('#parcoords .y-axis').length >= 2", timeout=30000)
        page.hover("#cand-table tbody tr:nth-child(2)")
        page.wait_for_timeout(300)
        assert page.evaluate("window.__pwned") is None
        assert log["dialogs"] == [] and log["errors"] == []
        # the text is shown as written
        study = page.inner_text("#study-inputs")
        for piece in OLD_PLACEHOLDERS + ["{{ 7 * 7 }}", "</script><script>window.__pwned = 'description'</script>"]:
            assert piece in study, piece
        assert HOSTILE_LAYER in page.inner_text("#layer-table")
        assert HOSTILE_KEY in page.inner_text("#search-summary")
        assert "%%DATA%% </title><script>" in page.title()
        heads = page.evaluate("[...document.querySelectorAll('#cand-table thead th')].map(th => th.dataset.k)")
        assert HOSTILE_KEY in heads                          # the key is an attribute value, not markup
        assert page.locator("#cand-table img, #layer-table svg, #study-inputs script, main img").count() == 0
    finally:
        page.close()


def test_hostile_front_json_text_in_sheets_runs_nothing(browser_ctx, tampered):
    out, front = tampered
    for name in (f"{front['candidates'][1]['id']}.html", "index.html"):
        page, log = _hostile_page(browser_ctx, (out / "handoff" / name).as_uri())
        try:
            page.wait_for_load_state("load")
            page.wait_for_timeout(200)
            assert page.evaluate("window.__pwned") is None
            assert log["dialogs"] == [] and log["errors"] == []
            if name != "index.html":
                text = page.inner_text("body")
                assert HOSTILE_LAYER in text and HOSTILE_MATERIAL in text
                assert page.locator("svg, img, script").count() == 0
        finally:
            page.close()


# ----------------------------------------------------------------------------- every view (issue: a report read at a glance)
@pytest.fixture(scope="module")
def infeasible(tmp_path_factory):
    """A real run of the shipped hinge study with a total-thickness limit nothing can meet."""
    text = UNBONDED_BASE.read_text(encoding="utf-8")
    assert "total_thickness_um: 200" in text
    study = tmp_path_factory.mktemp("infeasible-study") / "thin.yaml"
    study.write_text(text.replace("total_thickness_um: 200", "total_thickness_um: 40"), encoding="utf-8")
    out = tmp_path_factory.mktemp("infeasible")
    assert main(["solve", str(study), "--out", str(out), "--method", "evolutionary", "--budget", "500", "--quiet"]) == 0
    front = json.loads((out / "front.json").read_text(encoding="utf-8"))
    assert not front["candidates"] and front["search"]["infeasible"]["nearest"]
    return out, front


def test_infeasible_report_diagnoses_and_draws_no_empty_plot(browser_ctx, infeasible):
    out, front = infeasible
    inf = front["search"]["infeasible"]
    page, log = _open(browser_ctx, (out / "report.html").as_uri())
    try:
        assert page.locator("#diagnosis").is_visible()
        # no default-axes plot: the only plots are the nearest candidates' cross-sections, one each
        assert page.evaluate("[...document.querySelectorAll('.js-plotly-plot')]"
                             ".filter(p => !p.closest('#nearest-candidates')).length") == 0
        assert page.locator("#nearest-candidates .js-plotly-plot").count() == len(inf.get("nearest_candidates") or [])
        assert page.locator("#front, #section, #strain, #parcoords").count() == 0
        rows = page.evaluate("[...document.querySelectorAll('#diagnosis table.diag tbody tr')]"
                             ".map(r => [...r.children].map(td => td.textContent.trim()))")
        by_count = {r[0]: int(r[1].replace(",", "")) for r in rows}
        assert sorted(by_count.values()) == sorted(inf["violations"].values())     # front.json's counts
        checked = 0
        for miss in inf["nearest"]:                       # each violated constraint: limit and value reached
            row = next(r for r in rows if r[0] == miss["text"])
            if miss.get("limit") is not None:
                assert f"{miss['limit']:g}" in row[3].replace(",", "")
                assert f"{miss['achieved']:.4g}" in row[4].replace(",", "")
                checked += 1
        assert checked >= 1                               # the thickness limit at least
        relax = page.inner_text("#diagnosis ol.relax")
        smallest = min(inf["nearest"], key=lambda n: n["excess"])       # the smallest miss is relaxed first
        assert smallest["text"] in relax.split("\n")[0]
        assert "not an objective" not in page.inner_text("body")
        page.screenshot(path=str(out / "infeasible.png"), full_page=True)
    finally:
        page.close()
    assert log["errors"] == []


def test_leaves_compare_and_parallel_coordinates(browser_ctx, built):
    """Strain profiles label every leaf's neutral axis and shade the air gaps; the comparison view puts
    2-4 candidates on shared axes; the parallel-coordinates labels say L1, L2 ... and stay inside the plot."""
    out, front = built
    page, log = _open(browser_ctx, (out / "report.html").as_uri())
    try:
        cands = front["candidates"]
        page.evaluate("window.strainline.select(0)")
        na = cands[0]["bend"]["neutral_axis_um"]
        labels = page.evaluate("document.getElementById('strain').layout.annotations.map(a => a.text)")
        if isinstance(na, list):
            assert [t for t in labels if "neutral axis" in t] == [f"leaf {k + 1} neutral axis" for k in range(len(na))]
            gaps = [lay for lay in cands[0]["layers"] if lay["kind"] == "air-gap"]
            bands = page.evaluate("document.getElementById('strain').layout.shapes.filter(s => s.type === 'rect')"
                                  ".map(s => [s.y0, s.y1])")
            assert bands == [[g["y_bottom_um"], g["y_top_um"]] for g in gaps] and gaps
        else:
            assert [t for t in labels if "neutral axis" in t] == ["neutral axis"]
        if len(cands) >= 2:
            pick = [0, len(cands) - 1]
            page.evaluate(f"window.strainline.compare({pick})")
            ids = page.evaluate("document.getElementById('compare-section').layout.xaxis.ticktext")
            assert ids == [cands[i]["id"] for i in pick]
            ranges = page.evaluate("['compare-section', 'compare-strain'].map(id => "
                                   "document.getElementById(id).layout.yaxis.range)")
            assert ranges[0] == ranges[1]                   # heights on one shared axis
            xs = page.evaluate("document.getElementById('compare-strain').data.map(t => t.x)")
            want = [[lay["strain_bottom_pct"], lay["strain_top_pct"]] for i in pick for lay in cands[i]["layers"]
                    if lay["thickness_um"] > 0 and lay["kind"] != "air-gap"]
            assert xs == want                               # front.json's face strains, every candidate
            assert page.locator("#compare-table thead th").count() == 1 + len(pick)
        page.locator("#parcoords").scroll_into_view_if_needed()
        page.wait_for_function("document.querySelectorAll('#parcoords .y-axis').length >= 2", timeout=30000)
        dims = page.evaluate("document.getElementById('parcoords').data[0].dimensions.map(d => d.label)")
        assert not [d for d in dims if re.search(r"\[\d+\]", d)]                 # no 0-based names
        if "choices" in cands[0]:                         # the choices, named from 1 (L1 copper, film L1-L2)
            from strainline.optimizer.outputs.formatting import readable_choice

            named = {re.sub(r" \([^)]*\)$", "", d) for d in dims}      # a unit may follow the name
            assert named <= {readable_choice(k, v)[0] for k, v in cands[0]["choices"].items()}
        box = page.evaluate("(() => { const r = document.getElementById('parcoords').getBoundingClientRect();"
                            " return [r.left, r.right]; })()")
        texts = page.evaluate("[...document.querySelectorAll('#parcoords text')].filter(t => t.textContent)"
                              ".map(t => { const r = t.getBoundingClientRect(); return [r.left, r.right]; })")
        assert texts and all(box[0] - 0.5 <= a and b <= box[1] + 0.5 for a, b in texts)   # nothing clipped
    finally:
        page.close()
    assert log["errors"] == []


def test_field_check_mismatch_is_highlighted(browser_ctx, tmp_path):
    front = json.loads(FIXTURE.read_text(encoding="utf-8"))
    bad = front["candidates"][1]
    # a field-solved impedance 19.6 % below the 50-ohm target, outside the line's +/-10 % tolerance
    bad["line"]["field_check"] = dict(front["candidates"][0]["line"]["field_check"], z0_ohm=40.2,
                                      closed_form_error_pct=25.4)
    (tmp_path / "front.json").write_text(json.dumps(front), encoding="utf-8")
    assert main(["report", str(tmp_path), "--quiet"]) == 0
    page, log = _open(browser_ctx, (tmp_path / "report.html").as_uri())
    try:
        flagged = page.evaluate("[...document.querySelectorAll('#cand-table tbody tr.mismatch')]"
                                ".map(r => Number(r.dataset.i))")
        assert flagged == [1]
        ring = page.evaluate("document.getElementById('front').data.filter(t => t.name === 'field mismatch')"
                             ".map(t => t.x.length)")
        assert ring == [1]
        assert not page.locator("#field-flag").is_visible()
        page.evaluate("window.strainline.select(1)")
        assert page.locator("#field-flag").is_visible()
        assert "-19.6 % off target" in page.inner_text("#field-flag")
    finally:
        page.close()
    assert log["errors"] == []


def test_bend_zones_switch_the_strain_profile(browser_ctx, tmp_path):
    """A candidate with two bend zones and two lines: a button per zone redraws the strain profile with that
    zone's own profile, the zone and line tables list both; the sheet carries rows per zone and per line."""
    front = json.loads(FIXTURE.read_text(encoding="utf-8"))
    for c in front["candidates"]:
        y_na = c["bend"]["neutral_axis_um"]
        tops = [sum(lay["thickness_um"] for lay in c["layers"][j:]) for j in range(len(c["layers"]))]
        r_um = 1000.0          # fold at 1 mm: exact strain (y - y_na) / (R + y_na), DESIGN.md section 3
        profile = [{"name": lay["name"], "strain_top_pct": 100 * (t - y_na) / (r_um + y_na),
                    "strain_bottom_pct": 100 * (t - lay["thickness_um"] - y_na) / (r_um + y_na)}
                   for lay, t in zip(c["layers"], tops)]
        hinge = dict(c["bend"], name="hinge", profile=[{k: lay[k] for k in ("name", "strain_top_pct",
                                                                          "strain_bottom_pct")} for lay in c["layers"]])
        c["bend"] = dict(hinge)
        c["bends"] = [hinge, dict(c["bend"], name="fold", inner_radius_mm=1.0, use="install", profile=profile,
                                  peak_copper_strain_pct=max(abs(p["strain_top_pct"]) for p in profile))]
        c["lines"] = [dict(c["line"], name="antenna feed"), dict(c["line"], name="clock", width_um=61.0)]
    (tmp_path / "front.json").write_text(json.dumps(front), encoding="utf-8")
    assert main(["report", str(tmp_path), "--quiet"]) == 0
    page, log = _open(browser_ctx, (tmp_path / "report.html").as_uri())
    try:
        k = page.evaluate("window.strainline.state.selected")
        cand = front["candidates"][k]
        assert page.locator("#zone-buttons button").all_inner_texts() == ["hinge", "fold"]
        assert page.locator("#zone-table tbody tr").count() == 2
        page.click("#zone-buttons button:has-text('fold')")
        xs = page.evaluate("document.getElementById('strain').data.map(t => t.x)")
        want = [[p["strain_bottom_pct"], p["strain_top_pct"]] for p in cand["bends"][1]["profile"]]
        assert xs == want
        assert "fold" in page.evaluate("document.getElementById('strain').layout.title.text")
        lines = page.evaluate("[...document.querySelectorAll('#line-table tbody tr')].map(r => r.children[0].textContent)")
        assert lines == ["antenna feed", "clock"]                # several lines: one row each
    finally:
        page.close()
    assert log["errors"] == []
    sheet = pd.read_csv(tmp_path / "handoff" / f"{cand['id']}.csv", dtype=str, keep_default_na=False)
    assert {"bends[0].inner_radius_mm", "bends[1].inner_radius_mm", "lines[1].width_um"} <= set(sheet["key"])
    assert float(sheet.loc[sheet["key"] == "lines[1].width_um", "value"].iloc[0]) == 61.0
