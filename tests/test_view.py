"""The interactive strip-log view (``decode --view``, ``faciesseq.report.view``): a
self-contained page, the data it embeds, hostile names, and the page in headless
Chromium (skipped, with a message, where Chromium is absent). Synthetic cores from
tests/_synthetic.py and tests/hmm_synthetic.py (invented numbers)."""

import json
import re
from html.parser import HTMLParser

import hmm_synthetic as synth
import numpy as np
import pytest
from _chromium import CHROMIUM, open_page, page_errors, run_probe
from _synthetic import SHOREFACE, held_at_labels, synthetic_core
from PIL import Image

from faciesseq.cli import main
from faciesseq.interpretation import Interpretation
from faciesseq.report.view import script_json, view_data, view_html
from faciesseq.scheme import default_tract_model, load_scheme

HOSTILE = "</script><img src=x onerror=alert(1)>"
NEEDS_CHROMIUM = pytest.mark.skipif(
    CHROMIUM is None, reason="chromium not installed (apt-get install chromium)"
)


def _interpretation(names=("W-1", "W-2"), meta=None) -> Interpretation:
    model = default_tract_model()
    cores = {n: synthetic_core(model, n, seed=k, grain=k == 1) for k, n in enumerate(names)}
    first = next(iter(cores.values()))
    return Interpretation.from_cores(cores, first.tracts, first.surfaces, meta or {})


def _page(names=("W-1", "W-2"), meta=None, title=None) -> tuple[Interpretation, str]:
    interp = _interpretation(names, meta)
    return interp, view_html(interp, load_scheme(SHOREFACE), default_tract_model(), title)


def _embedded(html: str) -> dict:
    """The JSON data block of the page, parsed as the page's script parses it."""
    found = re.findall(r'<script type="application/json" id="view-data">(.*?)</script>', html, re.S)
    assert len(found) == 1
    return json.loads(found[0])


class _Tags(HTMLParser):
    """Every start tag with its attributes, as a browser's parser reads them."""

    def __init__(self):
        super().__init__()
        self.tags: list[tuple[str, dict]] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))


def _tags(html: str) -> list[tuple[str, dict]]:
    parser = _Tags()
    parser.feed(html)
    return parser.tags


# ---------------------------------------------------------------- the page itself


def test_page_is_self_contained_and_fetches_nothing():
    _, html = _page()
    tags = _tags(html)
    assert not re.search(r"""(?:src|href)\s*=\s*["']?\s*(?:https?:)?//""", html, re.I)
    assert all("src" not in attrs and "href" not in attrs for _, attrs in tags)
    assert [t for t, _ in tags if t in ("link", "img", "iframe", "object", "embed")] == []
    for call in ("fetch(", "XMLHttpRequest", "import(", "WebSocket", "sendBeacon"):
        assert call not in html
    # the browser itself is told to load nothing from anywhere
    csp = [a["content"] for t, a in tags if t == "meta" and "http-equiv" in a]
    assert csp and csp[0].startswith("default-src 'none'")
    scripts = [a for t, a in tags if t == "script"]
    assert scripts == [{"type": "application/json", "id": "view-data"}, {}]  # data, code


def test_page_embeds_every_bed_contact_and_pick():
    interp, html = _page()
    data = _embedded(html)
    assert [c["name"] for c in data["cores"]] == ["W-1", "W-2"]
    assert [t["code"] for t in data["tracts"]] == list(interp.tracts)
    assert [s["code"] for s in data["surfaces"]] == list(interp.surfaces)
    for shown, core in zip(data["cores"], interp, strict=True):
        beds = core.beds
        np.testing.assert_allclose(shown["beds"]["top"], beds["top"], rtol=1e-6)
        np.testing.assert_allclose(shown["beds"]["base"], beds["base"], rtol=1e-6)
        assert shown["beds"]["facies"] == beds["facies"].tolist()
        assert shown["beds"]["tract"] == beds["tract"].tolist()
        for k, t in enumerate(interp.tracts):
            np.testing.assert_allclose(shown["beds"]["p"][k], beds[f"p_{t}"], atol=5e-4)
        np.testing.assert_allclose(shown["contacts"]["depth"], core.boundaries["depth"], 1e-6)
        for k, s in enumerate(interp.surfaces):
            np.testing.assert_allclose(
                shown["contacts"]["p"][k], core.boundaries[f"p_{s}"], 0, 5e-4
            )
        assert len(shown["picks"]) == len(core.picks) == 2
        assert shown["gaps"] and shown["gaps"][0][1] - shown["gaps"][0][0] == pytest.approx(3.0)
    # boxes as wide as the grain size class (1 clay ... 7 gravel): the first core's from
    # the scheme's facies, the second core's from its beds' own grain_size
    scheme = load_scheme(SHOREFACE)
    assert [c["measure"] for c in data["cores"]] == ["grain_size", "grain_size"]
    grain = [scheme[f].grain_size for f in interp["W-1"].beds["facies"]]
    np.testing.assert_allclose(data["cores"][0]["beds"]["width"], np.array(grain) / 7, 0, 1e-4)
    grain = interp["W-2"].beds["grain_size"].to_numpy(float)
    np.testing.assert_allclose(data["cores"][1]["beds"]["width"], grain / 7, atol=1e-4)


def test_picks_are_labelled_as_the_strip_logs_label_them():
    from faciesseq.report.document import format_probability
    from faciesseq.report.striplog import SURFACE_AXIS_END

    core = synthetic_core(default_tract_model(), "W-1", seed=0)
    picks = core.picks.copy()
    picks.loc[picks.index[0], "probability"] = 0.9996  # a confident pick: "> 0.99"
    core = type(core)("W-1", "m", core.tracts, core.surfaces, core.beds, core.boundaries, picks, 0)
    interp = Interpretation.from_cores({"W-1": core}, core.tracts, core.surfaces, {})
    data = view_data(interp, load_scheme(SHOREFACE), default_tract_model())
    shown = data["cores"][0]["picks"]
    assert shown[0]["label"] == "MFS > 0.99"
    for pick, row in zip(shown, picks.itertuples(), strict=True):
        assert pick["label"] == f"MFS {format_probability(row.probability)}"
    # the page writes the label it is given; it formats no probability of a pick itself
    html = view_html(interp, load_scheme(SHOREFACE), default_tract_model())
    assert "toFixed(2)" not in html and "p.label" in html
    # the surface panel ends past 1, as the strip logs' does, so a pick at 1 shows whole
    assert data["surface_axis_end"] == SURFACE_AXIS_END > 1
    assert "p.probability * sx" in html and "t.width / DATA.surface_axis_end" in html


def _unnamed_scheme():
    """The shoreface scheme with every facies named only ``facies <code>``, as a scheme
    suggested from a minimal table names them."""
    from dataclasses import replace

    scheme = load_scheme(SHOREFACE)
    return replace(scheme, facies=tuple(replace(f, name=f"facies {f.code}") for f in scheme.facies))


def test_a_facies_named_only_by_its_code_has_no_name_in_the_page():
    data = view_data(_interpretation(), _unnamed_scheme(), default_tract_model())
    assert data["facies"] and all(f["name"] == "" for f in data["facies"])


def test_each_bed_knows_the_contacts_at_its_top_and_base():
    interp = _interpretation()
    core = interp["W-1"]
    data = view_data(interp, load_scheme(SHOREFACE), default_tract_model())["cores"][0]
    depth = core.boundaries["depth"].to_numpy(float)
    top, base = data["beds"]["top_contact"], data["beds"]["base_contact"]
    # the synthetic core: 40 beds, a gap after bed 25 (index 24), so 38 contacts
    assert len(depth) == 38
    assert top[0] == -1 and base[-1] == -1  # ends of the core
    assert base[24] == -1 and top[25] == -1  # either side of the gap
    for i in range(40):
        if top[i] >= 0:
            assert depth[top[i]] == pytest.approx(core.beds["top"].iloc[i])
            assert base[i - 1] == top[i]  # one contact, shared by the beds either side
        if base[i] >= 0:
            assert depth[base[i]] == pytest.approx(core.beds["base"].iloc[i])


def test_hostile_core_name_and_title_are_escaped():
    _, html = _page(names=("W-1", HOSTILE), title="<b>Quillerby</b> & co")
    assert HOSTILE not in html
    assert "<img" not in html.lower() and "</script><" not in html
    assert html.count("</script>") == 2  # the data block and the code, nothing else closes
    assert "&lt;b&gt;Quillerby&lt;/b&gt; &amp; co" in html
    data = _embedded(html)
    assert data["cores"][1]["name"] == HOSTILE  # the page still shows the name as written
    assert data["title"] == "<b>Quillerby</b> & co"
    assert "<b>" not in html


def test_script_json_cannot_end_its_element_or_break_a_line():
    text = script_json({"a": "</script><!-- \u2028 \u2029 & >"})
    assert "<" not in text and ">" not in text and "&" not in text
    assert "\u2028" not in text and "\u2029" not in text
    assert json.loads(text) == {"a": "</script><!-- \u2028 \u2029 & >"}


def test_not_finite_numbers_become_null():
    cores = dict(_interpretation().cores)
    cores["W-1"].beds.loc[3, "p_HST"] = np.nan
    first = cores["W-1"]
    interp = Interpretation.from_cores(cores, first.tracts, first.surfaces)
    data = view_data(interp, load_scheme(SHOREFACE), default_tract_model())
    assert data["cores"][0]["beds"]["p"][0][3] is None
    json.dumps(data, allow_nan=False)  # valid JSON for JSON.parse


def test_page_says_whether_the_probabilities_were_checked():
    _, html = _page()
    data = _embedded(html)
    assert data["checked"] is False  # no model said so: not checked
    assert "not checked" in data["note"]
    note = "Probabilities checked on 3 held-out labelled cores."
    _, html = _page(meta={"probabilities_checked": True, "probabilities_note": note})
    data = _embedded(html)
    assert data["checked"] is True and data["note"] == note


def test_without_a_scheme_the_facies_are_full_width_in_their_names_colours():
    from faciesseq.report.style import facies_colours

    interp = _interpretation()
    data = view_data(interp, None, default_tract_model())
    assert {c["measure"] for c in data["cores"]} == {"none"}
    assert set(data["cores"][0]["beds"]["width"]) == {1.0}
    # the colour a facies has in every figure without a scheme (from its name, told
    # apart from the others drawn)
    colours = facies_colours([f["code"] for f in data["facies"]])
    assert all(f["colour"] == colours[f["code"]] for f in data["facies"])


# ---------------------------------------------------------------- the command line


@pytest.fixture(scope="module")
def model_and_database(tmp_path_factory):
    folder = tmp_path_factory.mktemp("db")
    synth.write_database(folder, 4, 40, seed=5)
    model = folder / "model.json"
    argv = ["fit", str(folder / "cores.csv"), "--scheme", str(folder / "scheme.yaml")]
    assert main([*argv, "-o", str(model), "--restarts", "1"]) == 0
    return model, folder


def test_decode_view_writes_one_page_beside_the_tables(model_and_database, tmp_path, capsys):
    model, folder = model_and_database
    argv = ["decode", str(model), str(folder / "cores.csv"), "--summary", "json"]
    assert main([*argv, "-o", str(tmp_path / "plain")]) == 0
    assert not (tmp_path / "plain" / "view.html").exists()
    assert main([*argv, "--view", "-o", str(tmp_path / "out")]) == 0
    capsys.readouterr()
    page = (tmp_path / "out" / "view.html").read_text(encoding="utf-8")
    data = _embedded(page)
    tracts = (tmp_path / "out" / "tracts.csv").read_text().splitlines()
    assert len(data["cores"]) == 4
    assert sum(len(c["beds"]["top"]) for c in data["cores"]) == len(tracts) - 2  # note, header
    assert data["note"] in tracts[0]


# ---------------------------------------------------------------- in a browser

#: Written into <head> before the page's script: every error and console.error lands
#: in the DOM, where --dump-dom shows it.
_HOOK = """<script>
window.__errors = [];
window.addEventListener("error", e => window.__errors.push(String(e.message)));
console.error = (...a) => window.__errors.push(a.join(" "));
</script>"""

#: Run after the page's script: hover a bed, toggle a track, zoom in; results into the DOM.
_PROBE = """<script>
(function () {
  const out = {};
  const well = document.querySelectorAll(".well svg")[1];
  const bed = well.querySelector('[data-track="facies"] [data-bed="7"]');
  const r = bed.getBoundingClientRect();
  bed.dispatchEvent(new MouseEvent("mousemove",
    {bubbles: true, clientX: r.left + r.width / 2, clientY: r.top + r.height / 2}));
  out.tooltip = document.getElementById("tooltip").hidden ? null
    : document.getElementById("tooltip").innerText;
  out.tracks = [...well.querySelectorAll("[data-track]")].map(g => g.dataset.track);
  out.wells = document.querySelectorAll(".well").length;
  out.note = document.getElementById("note").innerText;
  const box = document.getElementById("show-prob");
  box.click();
  out.tracksAfter = [...document.querySelectorAll(".well svg")[1]
    .querySelectorAll("[data-track]")].map(g => g.dataset.track);
  box.click();
  const before = [+document.getElementById("top").value, +document.getElementById("base").value];
  document.getElementById("zoom-in").click();
  out.range = [before, [+document.getElementById("top").value,
    +document.getElementById("base").value]];
  document.getElementById("all").click();
  out.errors = window.__errors;
  const pre = document.createElement("pre");
  pre.id = "probe"; pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
})();
</script>"""


def _probe(tmp_path, html: str) -> tuple[dict, str]:
    return run_probe(tmp_path, html, _PROBE, "probe", "1400,1000", head=_HOOK)


@pytest.mark.chromium
@NEEDS_CHROMIUM
def test_view_opens_in_chromium_without_errors_and_draws_every_well(tmp_path):
    _, html = _page(names=("W-1", HOSTILE, "W-3"))
    page = tmp_path / "view.html"
    page.write_text(html, encoding="utf-8")
    shot = tmp_path / "view.png"
    dom, log = open_page(page, shot, size="1400,1000")
    assert page_errors(log) == []
    assert dom.count('class="well"') == 3
    assert "onerror" not in re.sub(r"<script.*?</script>", "", dom, flags=re.S).replace(
        "&lt;img src=x onerror=alert(1)&gt;", ""
    )
    assert "<img" not in dom
    with Image.open(shot) as img:
        assert img.size == (1400, 1000)
        grey = img.convert("L")
        # drawn tracks fill the middle of the page, not a blank or an error page
        middle = np.asarray(grey.crop((100, 300, 1000, 800)), dtype=float)
    assert middle.std() > 40


@pytest.mark.chromium
@NEEDS_CHROMIUM
def test_hover_toggle_and_zoom_in_chromium(tmp_path):
    interp, html = _page(names=("W-1", "W-2"))
    out, log = _probe(tmp_path, html)
    assert out["errors"] == [] and page_errors(log) == []
    assert out["wells"] == 2
    assert "not checked" in out["note"].lower()
    bed = interp["W-2"].beds.iloc[7]
    tip = out["tooltip"]
    assert tip is not None, "no tooltip after a mousemove on a bed"
    assert tip.startswith("W-2")
    assert f"{bed['top']:.3f}".rstrip("0").rstrip(".") in tip
    assert f"{bed['base']:.3f}".rstrip("0").rstrip(".") in tip
    assert f"{bed['thickness']:.3f}".rstrip("0").rstrip(".") in tip
    assert bed["facies"] in tip and bed["tract"] in tip
    for t in interp.tracts:
        assert f"{t}\t{bed[f'p_{t}']:.3f}" in tip
    # the surfaces at both contacts of the bed (bed 7 lies inside a segment)
    bounds = interp["W-2"].boundaries
    for depth in (bed["top"], bed["base"]):
        row = bounds[np.isclose(bounds["depth"], depth)].iloc[0]
        for s in interp.surfaces:
            assert f"{s}\t{row[f'p_{s}']:.3f}" in tip or f"{s} (picked)\t{row[f'p_{s}']:.3f}" in tip
    assert out["tracks"] == ["facies", "tract", "prob", "surf"]
    assert out["tracksAfter"] == ["facies", "tract", "surf"]
    (top0, base0), (top1, base1) = out["range"]
    assert base1 - top1 == pytest.approx((base0 - top0) / 2, rel=1e-3)


@pytest.mark.chromium
@NEEDS_CHROMIUM
def test_tooltip_of_a_facies_without_a_name_shows_its_code_alone(tmp_path):
    interp = _interpretation()
    html = view_html(interp, _unnamed_scheme(), default_tract_model())
    out, log = _probe(tmp_path, html)
    assert out["errors"] == [] and page_errors(log) == []
    code = interp["W-2"].beds["facies"].iloc[7]
    line = next(x for x in out["tooltip"].splitlines() if x.startswith("facies"))
    assert line.rstrip() == f"facies\t{code}"  # not "facies\tCODE \u2013 "


# ---------------------------------------------------------------- layout of the page


def _shifted(core, by: float, name: str):
    """``core`` moved ``by`` down the hole and renamed."""
    beds = core.beds.assign(top=core.beds["top"] + by, base=core.beds["base"] + by)
    bounds = core.boundaries.assign(depth=core.boundaries["depth"] + by)
    picks = core.picks.copy()
    for column in ("depth", "depth_top", "depth_base"):
        picks[column] = picks[column] + by
    return type(core)(name, "m", core.tracts, core.surfaces, beds, bounds, picks, 0.0)


def _apart(names=("W-1", "W-2", "W-3", "W-4"), step=300.0) -> Interpretation:
    """Cores of one field cored at depths far apart (the second at 300 m below the
    first, ...), the first with a pick at its very top, the second a pick at probability 1."""
    model = default_tract_model()
    cores = {
        n: _shifted(synthetic_core(model, n, seed=k), k * step, n) for k, n in enumerate(names)
    }
    first = cores[names[0]]
    first.picks.loc[first.picks.index[0], ["depth", "depth_top"]] = float(first.beds["top"].min())
    second = cores[names[1]]
    second.picks.loc[second.picks.index[0], "probability"] = 1.0
    return Interpretation.from_cores(cores, first.tracts, first.surfaces, {})


def test_cores_far_apart_hang_on_their_own_tops_by_default():
    from faciesseq.report.view import hang_by_default

    assert hang_by_default([(80.0, 153.0), (310.0, 349.0)])
    assert not hang_by_default([(80.0, 153.0), (95.0, 160.0)])
    assert not hang_by_default([(80.0, 153.0)])  # one core fills its column anyway
    scheme = load_scheme(SHOREFACE)
    assert view_data(_apart(), scheme, default_tract_model())["hang"] is True
    assert view_data(_interpretation(), scheme, default_tract_model())["hang"] is False


#: Run after the page's script: where the legend, wells, first beds and pick labels are.
_LAYOUT = """<script>
(function () {
  const out = {};
  const box = r => ({left: r.left, right: r.right, top: r.top, bottom: r.bottom});
  out.legend = box(document.getElementById("legend").getBoundingClientRect());
  out.wells = [...document.querySelectorAll(".well svg")].map(s => box(s.getBoundingClientRect()));
  const firstBeds = () => [...document.querySelectorAll(".well svg")].map(s =>
    s.querySelector('[data-track="facies"] [data-bed="0"]').getBoundingClientRect().top);
  out.hang = document.getElementById("hang").checked;
  out.firstBeds = firstBeds();
  out.labels = [...document.querySelectorAll(".well svg")].map(svg => {
    const heads = [...svg.querySelectorAll("text.small")].filter(t => /decoded|contact/.test(
      t.textContent)).map(t => t.getBoundingClientRect().bottom);
    const hatch = [...svg.querySelectorAll('rect[fill^="url(#gap"]')];
    return [...svg.querySelectorAll("text")].filter(t => /^[A-Z]+ (?:[<>] )?\\d\\.\\d\\d$/.test(
      t.textContent)).map(t => ({
        top: t.getBoundingClientRect().top, heads: Math.max(...heads),
        clipped: !!t.closest("[clip-path]"),
        underHatch: hatch.some(h => h.compareDocumentPosition(t) &
          Node.DOCUMENT_POSITION_PRECEDING)}));
  });
  out.markers = [...document.querySelectorAll(".well svg")].map(svg => ({
    right: svg.getBoundingClientRect().right,
    picks: [...svg.querySelectorAll('[data-track="surf"] path')].map(p => {
      const r = p.getBoundingClientRect(); return {left: r.left, right: r.right}; })}));
  out.labelTexts = [...document.querySelectorAll(".pick-labels text")].map(t => t.textContent);
  out.firstLeft = document.getElementById("wells").firstElementChild
    .getBoundingClientRect().left;
  document.getElementById("hang").click();
  out.firstBedsAfter = firstBeds();
  const pre = document.createElement("pre");
  pre.id = "probe"; pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
})();
</script>"""


@pytest.mark.chromium
@NEEDS_CHROMIUM
def test_layout_at_1200_px_legend_clear_labels_clear_cores_hung(tmp_path):
    html = view_html(_apart(), load_scheme(SHOREFACE), default_tract_model())
    out, log = run_probe(tmp_path, html, _LAYOUT, "probe", "1200,1400")
    assert page_errors(log) == []
    legend = out["legend"]
    for well in out["wells"]:  # four wells do not fit beside the legend: it goes above them
        apart = (
            well["right"] <= legend["left"]
            or well["left"] >= legend["right"]
            or well["top"] >= legend["bottom"]
            or well["bottom"] <= legend["top"]
        )
        assert apart, (well, legend)
    labels = [label for well in out["labels"] for label in well]
    assert labels
    for label in labels:  # under the tracks' heads, over the gaps' hatching, never clipped
        assert label["top"] >= label["heads"] - 0.5
        assert not label["clipped"] and not label["underHatch"]
    # every pick marker whole inside its well, the one at probability 1 too (the surface
    # panel's axis ends at 1.1, as in the strip logs), labelled as the strip logs label it
    for well in out["markers"]:
        assert well["picks"]
        for pick in well["picks"]:
            assert pick["left"] < pick["right"] <= well["right"]
    assert "MFS > 0.99" in out["labelTexts"]
    assert out["firstLeft"] >= 8  # the first core's header clear of the page's edge
    # cores 300 m apart hang on their tops: first beds level; on one axis they are not
    assert out["hang"] is True
    assert max(out["firstBeds"]) - min(out["firstBeds"]) < 1.0
    assert out["firstBedsAfter"][1] > out["firstBedsAfter"][0] + 50


def test_view_opens_on_a_median_core_where_core_lengths_differ_much():
    from faciesseq.report.view import opening_window

    # the demo's cores: all from 0 m, 26-174 m long; on one 174 m axis the short ones
    # filled a sixth of their columns: the view opens on the median core's length
    demo = [(0.0, 30.2), (0.0, 31.5), (0.0, 49.6), (0.0, 128.0), (0.0, 174.4)]
    assert opening_window(demo, hang=False) == (0.0, 49.6)
    # cores of like length hung on their tops (a minimal table's 67-95 m): all of them
    hung = [(420.6, 490.7), (2552.8, 2647.7), (2098.8, 2165.9)]
    assert opening_window(hung, hang=True) == pytest.approx((0.0, 94.9))
    # on one axis the window starts at the shallowest top
    assert opening_window([(80.0, 153.0), (95.0, 160.0)], hang=False) == (80.0, 160.0)
    data = view_data(_apart(), load_scheme(SHOREFACE), default_tract_model())
    assert data["hang"] and data["window"][0] == 0.0


def _faint_surfaces() -> Interpretation:
    """Two cores where LHB has no probability anywhere; BSFR stays at 0.001 at every
    contact of W-1 and reaches 0.5 at one contact of W-2 only; the other surfaces as
    decoded."""
    import dataclasses

    interp = _interpretation()
    cores = {}
    for core in interp:
        bounds = core.boundaries.assign(p_LHB=0.0, p_BSFR=0.001)
        if core.core == "W-2":
            bounds.loc[bounds.index[3], "p_BSFR"] = 0.5
        cores[core.core] = dataclasses.replace(core, boundaries=bounds)
    return Interpretation.from_cores(cores, interp.tracts, interp.surfaces, {})


def test_page_legend_lists_the_surfaces_some_strip_log_of_its_cores_draws():
    # the page's legend listed every surface of the tract model, LHB too, which no core
    # has; the strip logs list only those drawn (report.striplog.drawn_surfaces)
    from faciesseq.report.striplog import drawn_surfaces

    interp = _faint_surfaces()
    data = view_data(interp, load_scheme(SHOREFACE), default_tract_model())
    listed = [s["code"] for s in data["surfaces"] if s["drawn"]]
    assert listed == ["BSFR", "SB", "MRS", "MFS"]
    assert drawn_surfaces(interp["W-1"]) == ("SB", "MRS", "MFS")
    assert set(listed) == {s for core in interp for s in drawn_surfaces(core)}
    # every surface keeps its colour and its contact probabilities, drawn or not
    assert [s["code"] for s in data["surfaces"]] == list(interp.surfaces)


#: Run after the page's script: the codes of the surface legend, into the DOM.
_SURFACE_LEGEND = """<script>
(function () {
  const part = [...document.querySelectorAll("#legend .part")]
    .find(p => p.querySelector("h2").textContent === "surface");
  const pre = document.createElement("pre"); pre.id = "legend-codes";
  pre.textContent = JSON.stringify([...part.querySelectorAll("code")].map(c => c.textContent));
  document.body.appendChild(pre);
})();
</script>"""


@pytest.mark.chromium
@NEEDS_CHROMIUM
def test_page_surface_legend_in_chromium_leaves_out_surfaces_no_core_draws(tmp_path):
    html = view_html(_faint_surfaces(), load_scheme(SHOREFACE), default_tract_model())
    codes, log = run_probe(tmp_path, html, _SURFACE_LEGEND, "legend-codes", "1400,1000")
    assert page_errors(log) == []
    assert codes == ["BSFR", "SB", "MRS", "MFS", "\u25c0"]  # then the pick's mark


# ---------------------------------------------------------------- beds held at the label


def test_page_marks_the_beds_held_at_the_label_and_only_where_some_are():
    from faciesseq.report.style import HELD_NOTE, TRACT_COLOURS, held_ink

    scheme, model = load_scheme(SHOREFACE), default_tract_model()
    interp = _interpretation()
    held = held_at_labels(interp, [*range(2, 9), 45, 46])  # beds of both cores (40 beds each)
    data = view_data(held, scheme, model)
    for shown, core in zip(data["cores"], held, strict=True):
        assert shown["beds"]["held"] == core.beds["clamped"].tolist()
    assert data["held"]["note"] == HELD_NOTE
    assert data["held"]["ink"] == [held_ink(TRACT_COLOURS[t]) for t in interp.tracts]
    page = view_html(held, scheme, model)
    assert "drawHeld(core, defs, g, ci" in page and "heldTip(b, i, sub, pt)" in page
    # no bed held (a decode without --keep-labels, or none of its labels kept): the page
    # is the one it always was, with nothing of the held beds in its data or script
    plain = view_html(interp, scheme, model)
    assert view_html(held_at_labels(interp, []), scheme, model) == plain
    assert "held" not in _embedded(plain) and "@HELD" not in plain and "Held" not in plain


#: Hover a held bed and a free one of the first core; the held marks and the legend.
_HELD_PROBE = """<script>
(function () {
  const out = {errors: window.__errors};
  const well = document.querySelectorAll(".well svg")[0];
  function hover(i) {
    const bed = well.querySelector('[data-track="facies"] [data-bed="' + i + '"]');
    const r = bed.getBoundingClientRect();
    bed.dispatchEvent(new MouseEvent("mousemove",
      {bubbles: true, clientX: r.left + r.width / 2, clientY: r.top + r.height / 2}));
    return document.getElementById("tooltip").innerText;
  }
  out.heldTip = hover(4);
  out.freeTip = hover(20);
  out.marked = [...well.querySelectorAll('[data-track="prob"] rect.held')]
    .map(r => +r.dataset.bed);
  out.elsewhere = well.querySelectorAll('[data-track="tract"] rect.held').length;
  const li = document.querySelector("#legend li.held");
  out.legend = li ? li.innerText : null;
  out.legendPart = li ? li.closest(".part").querySelector("h2").innerText : null;
  const pre = document.createElement("pre");
  pre.id = "probe"; pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
})();
</script>"""


@pytest.mark.chromium
@NEEDS_CHROMIUM
def test_held_beds_hatched_and_their_readout_names_the_label_in_chromium(tmp_path):
    from faciesseq.report.style import HELD_NOTE

    held = held_at_labels(_interpretation(), range(2, 9))
    html = view_html(held, load_scheme(SHOREFACE), default_tract_model())
    out, log = run_probe(tmp_path, html, _HELD_PROBE, "probe", "1400,1000", head=_HOOK)
    assert out["errors"] == [] and page_errors(log) == []
    assert out["marked"] == list(range(2, 9)) and out["elsewhere"] == 0
    # the held bed's readout says whose its tract is, and shows no probability of 1
    assert "held at the geologist's label" in out["heldTip"]
    assert "1.000" not in out["heldTip"]
    assert "held" not in out["freeTip"]
    bed = held["W-1"].beds.iloc[20]
    for t in held.tracts:  # embedded to 4 significant digits, shown to 3 decimals
        shown = float(format(bed[f"p_{t}"], ".4g"))
        assert f"{t}\t{shown:.3f}" in out["freeTip"]
    assert out["legendPart"] == "systems tract" and HELD_NOTE in out["legend"]


def test_decode_keep_labels_view_marks_the_beds_the_tracts_table_calls_clamped(
    model_and_database, tmp_path, capsys
):
    # the clamped column decode adds to the beds reaches the page with the beds
    import pandas as pd

    model, folder = model_and_database
    cores = pd.read_csv(folder / "cores.csv")
    cores.loc[cores.index % 3 > 0, "tract"] = None  # a third of the intervals labelled
    cores.to_csv(tmp_path / "labelled.csv", index=False)
    argv = ["decode", str(model), str(tmp_path / "labelled.csv"), "--labels", "tract"]
    assert main([*argv, "--keep-labels", "--view", "-o", str(tmp_path / "out")]) == 0
    capsys.readouterr()
    data = _embedded((tmp_path / "out" / "view.html").read_text(encoding="utf-8"))
    tracts = pd.read_csv(tmp_path / "out" / "tracts.csv", skiprows=1)
    shown = [h for core in data["cores"] for h in core["beds"]["held"]]
    assert shown == tracts["clamped"].tolist() and 0 < sum(shown) < len(shown)
