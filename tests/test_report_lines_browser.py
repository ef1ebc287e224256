"""Several lines, yield and the nearest candidates of an infeasible run, in a real headless Chromium.

The front is a real `strainline solve` of the shipped three-line study with an impedance-yield limit added
(tests/lines_front.py). The report must show every line (table, panel, cross-section drawn to scale with each
line's own width on its own layer), each line's yield and the tolerance with the largest variance share, every
zone; the infeasible panel must draw each nearest candidate to scale with its misses; hostile line names must
show as text and run nothing. Every figure is compared with front.json; insertion loss with dB/m x m
(definition of a per-length loss).
"""
from __future__ import annotations

import json
import shutil
import tempfile

import pytest

from lines_front import NAMES, infeasible, renamed, solved_front
from strainline.optimizer.cli.main import main
from strainline.optimizer.outputs.formatting import fmt
from strainline.optimizer.outputs.stack import layer_heights

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
        "--no-first-run", "--disable-sync"]
HOSTILE = ("</script><script>window.__pwned = 'script'</script>", "<img src=x onerror=\"window.__pwned = 'img'\">",
           "<b onmouseover=alert(1)>pair</b>")


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


@pytest.fixture(scope="module")
def solved(tmp_path_factory):
    return solved_front(tmp_path_factory.mktemp("lines-browser"))


def _report(front, folder):
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "front.json").write_text(json.dumps(front), encoding="utf-8")
    assert main(["report", str(folder), "--quiet"]) == 0
    return folder


def _open(ctx, url):
    page = ctx.new_page()
    log = {"errors": [], "dialogs": []}
    page.on("console", lambda m: log["errors"].append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: log["errors"].append(str(e)))
    page.on("dialog", lambda d: (log["dialogs"].append(d.message), d.dismiss()))
    page.goto(url)
    page.wait_for_function("window.strainline && window.strainline.renders > 0", timeout=30000)
    return page, log


def _cells(page, sel):
    return page.evaluate(f"[...document.querySelectorAll('{sel} tbody tr')]"
                         ".map(r => [...r.children].map(td => td.textContent.trim()))")


def test_every_line_its_yield_and_dominant_tolerance_in_the_panel(browser_ctx, solved, tmp_path):
    front = solved
    out = _report(front, tmp_path / "three")
    page, log = _open(browser_ctx, (out / "report.html").as_uri())
    try:
        cands = front["candidates"]
        for i in (0, len(cands) - 1):
            page.evaluate(f"window.strainline.select({i})")
            cand = cands[i]
            heads = page.evaluate("[...document.querySelectorAll('#line-table thead th')].map(t => t.textContent)")
            rows = _cells(page, "#line-table")
            assert [r[0] for r in rows] == list(NAMES)
            col = {h: j for j, h in enumerate(heads)}
            for r, ln in zip(rows, cand["lines"]):
                assert r[col["type, layer"]] == f"{ln['type']} on {ln['layer_name']}"
                assert r[col["width / gap (um)"]] == fmt(ln["width_um"]) + (
                    "" if ln["gap_um"] is None else f" / {fmt(ln['gap_um'])}")
                off = round(ln["impedance_error_pct"], 2) + 0.0                 # off target, percent
                assert r[col["impedance (ohm)"]] == (f"Zdiff {fmt(ln['z_diff_ohm'])}" if ln["z_diff_ohm"] is not None
                                                     else f"Z0 {fmt(ln['z0_ohm'])}") + f" ({'+' if off >= 0 else ''}{fmt(off)} %)"
                assert r[col["target (ohm)"]].startswith(fmt(ln["target_ohm"]))
                assert r[col["loss (dB/m)"]] == f"{fmt(ln['loss_db_per_m'])} at {fmt(ln['frequency_ghz'])} GHz"
                if ln["length_mm"] is None:
                    assert r[col["insertion loss (dB)"]] == "-"
                else:                                   # dB/m x m (definition)
                    assert r[col["insertion loss (dB)"]] == (f"{fmt(ln['loss_db_per_m'] * ln['length_mm'] / 1000)} over "
                                                             f"{fmt(ln['length_mm'])} mm")
                y = ln["impedance_yield"]
                assert r[col["impedance yield"]].startswith(fmt(y["yield_pct"]) + " %")
                dom = max(y["variance_share"], key=y["variance_share"].get)    # largest variance share
                assert r[col["dominant tolerance"]].startswith(dom)
                assert f"{fmt(100 * y['variance_share'][dom], 3)} % of the variance" in r[col["dominant tolerance"]]
            figures = page.inner_text("#cand-figures")
            for ln in cand["lines"]:
                assert f"impedance yield of {ln['name']} {fmt(ln['impedance_yield']['yield_pct'])} %" in figures
                assert "dominant tolerance: " + max(ln["impedance_yield"]["variance_share"],
                                                   key=ln["impedance_yield"]["variance_share"].get) in figures
            # the cross-section draws every line on its layer with its own width, to scale
            traces = page.evaluate("document.getElementById('section').data.filter(t => /^signal/.test(t.name))"
                                   ".map(t => [t.name, t.x, t.y])")
            copper = [j for j, lay in enumerate(cand["layers"]) if lay["kind"] == "copper"]
            by_layer = {}
            for k, ln in enumerate(cand["lines"]):
                mine = [t for t in traces if t[0] == ("signal" if k == 0 else f"signal {ln['name']}")]
                pair = ln["type"].startswith("coupled")
                assert len(mine) == (2 if pair else 1)              # a pair: two conductors
                for _, xs, _ in mine:
                    assert max(xs) - min(xs) == pytest.approx(ln["width_um"], rel=1e-9)
                if pair:
                    edges = sorted([min(mine[0][1]), max(mine[0][1]), min(mine[1][1]), max(mine[1][1])])
                    assert edges[2] - edges[1] == pytest.approx(ln["gap_um"], rel=1e-9)
                bottom, top = layer_heights(cand["layers"])[copper[ln["layer"] - 1]]   # its own copper layer
                for _, _, ys in mine:
                    assert min(ys) == pytest.approx(bottom) and max(ys) == pytest.approx(top)
                by_layer.setdefault(ln["layer"], []).extend((min(t[1]), max(t[1])) for t in mine)
            for spans in by_layer.values():                  # lines sharing a layer do not overlap
                spans.sort()
                assert all(a[1] < b[0] for a, b in zip(spans, spans[1:]))
            tags = page.evaluate("[...document.querySelectorAll('#layer-table tbody tr')].map(r => r.children[0].textContent)")
            for lay_no in by_layer:
                on = ", ".join(ln["name"] for ln in cand["lines"] if ln["layer"] == lay_no)
                assert tags[copper[lay_no - 1]].endswith(f"(signal: {on})")
            # every zone: a button and a table row each
            assert page.locator("#zone-buttons button").all_inner_texts() == [z["name"] for z in cand["bends"]]
            assert [r[0] for r in _cells(page, "#zone-table")] == [z["name"] for z in cand["bends"]]
            page.click("#zone-buttons button:has-text('fold')")      # the install fold: its own limit, about 2 %
            lim = page.evaluate("document.getElementById('strain').layout.annotations"
                                ".filter(a => /strain limit/.test(a.text)).map(a => a.text)")
            assert lim == ["strain limit +/-2 %"]
            xs = page.evaluate("document.getElementById('strain').data.map(t => t.x)")
            fold = cand["bends"][0]
            assert xs == [[p["strain_bottom_pct"], p["strain_top_pct"]] for p, lay in zip(fold["profile"], cand["layers"])
                          if lay["thickness_um"] > 0 and lay["kind"] != "air-gap"]
        # the candidate table: each line's yield and dominant tolerance as columns
        heads = page.evaluate("[...document.querySelectorAll('#cand-table thead th')].map(t => t.textContent)")
        for name in NAMES:
            assert f"{name}: impedance yield (%)" in heads and f"{name}: dominant tolerance" in heads
        j = heads.index(f"{NAMES[1]}: impedance yield (%)")
        shown = page.evaluate(f"[...document.querySelectorAll('#cand-table tbody tr')].map(r => "
                              f"[Number(r.dataset.i), Number(r.children[{j}].dataset.v)])")
        assert all(v == cands[i]["lines"][1]["impedance_yield"]["yield_pct"] for i, v in shown)
        page.screenshot(path=str(tmp_path / "three-lines.png"), full_page=True)
    finally:
        page.close()
    assert log["errors"] == []


def test_infeasible_panel_draws_each_nearest_candidate_with_its_misses(browser_ctx, solved, tmp_path):
    front = infeasible(solved)
    near = front["search"]["infeasible"]["nearest_candidates"]
    out = _report(front, tmp_path / "infeasible")
    page, log = _open(browser_ctx, (out / "report.html").as_uri())
    try:
        assert page.locator("#nearest-candidates .near").count() == len(near)
        # plots only inside the nearest-candidate cards: no empty front plot with default axes
        assert page.evaluate("[...document.querySelectorAll('.js-plotly-plot')]"
                             ".filter(p => !p.closest('#nearest-candidates')).length") == 0
        for k, n in enumerate(near):
            data = page.evaluate(f"document.getElementById('near-section-{k}').data"
                                 ".filter(t => t.fill === 'toself').map(t => t.y)")
            want = [[b, b, t, t, b] for b, t in layer_heights(n["layers"])]
            assert data == [pytest.approx(w) for w in want]            # every layer to scale, top to bottom
            anns = page.evaluate(f"document.getElementById('near-section-{k}').layout.annotations.map(a => [a.text, a.y])")
            copper = [j for j, lay in enumerate(n["layers"]) if lay["kind"] == "copper"]
            tops = [t for _, t in layer_heights(n["layers"])]
            want = [[p.split("@L")[0], pytest.approx(tops[copper[int(p.split("@L")[1]) - 1]])]   # each line on its layer
                    for p in n["choices"]["line_layers"].split()]
            assert [a for a in anns if a[0] in NAMES] == want
            lay = page.evaluate(f"document.getElementById('near-section-{k}').layout.yaxis")
            assert lay["scaleanchor"] == "x" and lay["scaleratio"] == 1
            (row,) = _cells(page, f".near:nth-child({k + 1}) table.misses")
            m = n["misses"][0]
            assert row[0] == m["text"]
            assert row[1] == f"at most {fmt(m['limit'])} um" and row[2] == f"{fmt(m['achieved'])} um"
            head = page.inner_text(f".near:nth-child({k + 1}) h4")
            assert f"nearest {n['rank']}" in head and f"{fmt(n['total_thickness_um'])} um thick" in head
        page.screenshot(path=str(tmp_path / "nearest.png"), full_page=True)
    finally:
        page.close()
    assert log["errors"] == []


def test_hostile_line_names_show_literally_and_run_nothing(browser_ctx, solved, tmp_path):
    front = renamed(solved, HOSTILE)
    out = _report(front, tmp_path / "hostile")
    page, log = _open(browser_ctx, (out / "report.html").as_uri())
    try:
        for i in range(len(front["candidates"])):
            page.evaluate(f"window.strainline.select({i})")
        page.evaluate("window.strainline.compare([0, 1])")
        page.hover("#section")
        page.wait_for_timeout(300)
        assert page.evaluate("window.__pwned") is None
        assert log["dialogs"] == [] and log["errors"] == []
        assert [r[0] for r in _cells(page, "#line-table")] == list(HOSTILE)
        heads = page.evaluate("[...document.querySelectorAll('#cand-table thead th')].map(t => t.textContent)")
        assert f"{HOSTILE[1]}: impedance yield (%)" in heads
        assert page.locator("main img, main script, #line-table b, #cand-table b").count() == 0
    finally:
        page.close()
    cid = front["candidates"][0]["id"]
    page, log = _open_sheet(browser_ctx, (out / "handoff" / f"{cid}.html").as_uri())
    try:
        assert page.evaluate("window.__pwned") is None and log["errors"] == []
        text = page.inner_text("body")
        assert all(f"line {h}" in text for h in HOSTILE[1:])     # the first line's name heads section 2
        assert f"Controlled impedance: line {HOSTILE[0]}" in text
        assert page.locator("img, script, .block b").count() == 0
    finally:
        page.close()


def _open_sheet(ctx, url):
    page = ctx.new_page()
    log = {"errors": []}
    page.on("pageerror", lambda e: log["errors"].append(str(e)))
    page.on("dialog", lambda d: (log["errors"].append(d.message), d.dismiss()))
    page.goto(url)
    page.wait_for_load_state("load")
    page.wait_for_timeout(200)
    return page, log


def test_a_field_check_mismatch_on_any_line_is_highlighted(browser_ctx, solved, tmp_path):
    """Test fixture: the third line of one candidate gets a field check 19.6 % below its 100-ohm target,
    outside its +/-10 % tolerance (the study's lines[2].tolerance); the other lines get none."""
    import copy

    front = copy.deepcopy(solved)
    k = 1
    ln = front["candidates"][k]["lines"][2]
    assert ln["target_ohm"] == 100 and ln["type"] == "coupled-microstrip"
    ln["field_check"] = {"z_diff_ohm": 80.4, "z0_ohm": 41.0, "closed_form_error_pct": 24.4,
                         "width_um": ln["width_um"] * 0.8, "refined_ok": True, "refined_width_in_range": True}
    out = _report(front, tmp_path / "field")
    page, log = _open(browser_ctx, (out / "report.html").as_uri())
    try:
        flagged = page.evaluate("[...document.querySelectorAll('#cand-table tbody tr.mismatch')]"
                                ".map(r => Number(r.dataset.i))")
        assert flagged == [k]
        page.evaluate(f"window.strainline.select({k})")
        assert page.locator("#field-flag").is_visible()
        assert f"line {ln['name']}: field-solved impedance -19.6 % off target" in page.inner_text("#field-flag")
        rows = page.evaluate("[...document.querySelectorAll('#line-table tbody tr')].map(r => [r.dataset.line, "
                             "r.classList.contains('mismatch'), r.lastElementChild.textContent])")
        assert [(r[0], r[1]) for r in rows] == [(n, n == ln["name"]) for n in NAMES]
        assert rows[2][2].startswith("MISMATCH field-solved impedance -19.6 % off target (tolerance +/-10 %)")
    finally:
        page.close()
    assert log["errors"] == []
    sheet = (out / "handoff" / f"{front['candidates'][k]['id']}.csv").read_text(encoding="utf-8")
    assert "lines[2].field_check.z_diff_ohm" in sheet and ",80.4," in sheet
