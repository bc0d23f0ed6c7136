"""The leaderboard site without a browser: the page table, self-contained output, escaping, significance
letters and verdict sentences, the rank map, text contrast (WCAG) and colours under colour-vision
deficiency (Machado et al. 2009)."""
import itertools
import json
import re
import tomllib
from pathlib import Path

import jinja2
import markupsafe
import matplotlib
import numpy as np
import pandas as pd
import pytest

from lopsided.analysis import compare
from lopsided.benchmark import run_suite
from lopsided.report import ENV, write_report
from lopsided.report.figures import COLOURS
from lopsided.report.heatmap import RAMP, draw_rank_map, ranks_by_dataset
from lopsided.report.site import PAGES, Page, group_letters, score_rows, top_group, verdict, write_site
from lopsided.suite import load_suite

RUN_PAGES = [p for p in PAGES if p.file != "try.html"]   # what a `lopsided run` folder has
ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "lopsided" / "report"
HOSTILE = '<img src=x onerror=alert(1)> & "lr"'

SUITE = """
name = "films"
seed = 11
description = "Serum-film screening and micro-plastic identification, demo size."
datasets = ["spectra:serum?donors=24&ratio=3&region=fingerprint&step=16",
            "spectra:polymers?positive=pvc&particles=240&region=fingerprint&step=16",
            "sklearn:wine?positive=2"]
resamplers = ["none", "random-under", "smote"]
learners = [{ name = "logistic-regression", label = 'LEARNER' },
            { name = "random-forest", params = { n_estimators = 8 } }]
metrics = ["balanced_accuracy", "mcc"]
[protocol]
repeats = 1
folds = 2
ratios = ["natural", 2]
sizes = ["all"]
min_minority = 3
"""


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    """One small run whose learner label is hostile HTML: (folder, run result, suite dict)."""
    folder = tmp_path_factory.mktemp("site")
    suite = folder / "films.toml"
    suite.write_text(SUITE.replace("LEARNER", HOSTILE), encoding="utf-8")
    result = run_suite(suite, out=folder / "out", progress=False)
    return folder / "out", result, load_suite(suite).as_dict()


def test_every_page_of_the_table_is_written_with_the_menu_and_its_own_template(run):
    out, _, _ = run
    assert PAGES[0].file == "index.html" and len({p.file for p in PAGES}) == len(PAGES)
    assert not (out / "try.html").exists()          # a page only `lopsided try` folders have
    for page in RUN_PAGES:
        assert (PACKAGE / "templates" / page.template).is_file(), page.template
        html = (out / page.file).read_text(encoding="utf-8")
        assert f'<a href="{page.file}" aria-current="page">{page.title}</a>' in html
        assert all(f'href="{p.file}"' in html for p in RUN_PAGES)
        assert "research evidence" in html.lower()                        # the caution, on every page


def test_a_new_page_is_one_entry_and_one_template(run, tmp_path):
    out, result, suite = run
    env = ENV.overlay(loader=jinja2.ChoiceLoader([
        jinja2.DictLoader({"extra.html.j2": '{% extends "base.html.j2" %}{% block content %}'
                                            '<p id="n">{{ count }} datasets</p>{% endblock %}'}),
        ENV.loader]))
    extra = Page("extra.html", "extra.html.j2", "Extra", lambda ctx: {"count": len(ctx["suite"]["datasets"])})
    context = {"suite": {"name": "films", "datasets": ["a", "b"]}, "summary": result.summary.as_json(), "caution": "Caution.",
               "version": "0"}
    write_site(env, tmp_path, context, pages=(extra,))
    html = (tmp_path / "extra.html").read_text(encoding="utf-8")
    assert '<p id="n">2 datasets</p>' in html and (tmp_path / "static" / "site.css").is_file()


def test_the_folder_is_self_contained(run):
    """Every stylesheet, script, image and link of every page is a file in the folder: nothing remote."""
    out, _, _ = run
    for page in RUN_PAGES:
        html = (out / page.file).read_text(encoding="utf-8")
        assert not re.search(r'<(?:link|script|img|iframe)[^>]+(?:src|href)="(?:https?:)?//', html), page.file
        for target in re.findall(r'(?:href|src)="([^"#]+)"', html):
            if not target.startswith("data:"):                            # inline: the rank map's raster
                assert (out / target).is_file(), f"{page.file}: {target} is missing"
    assert (out / "static" / "site.js").is_file() and (out / "figures").is_dir()


def test_names_from_the_data_are_escaped_everywhere(run, tmp_path):
    out, result, suite = run
    hostile = result.summary.as_json()
    hostile["datasets"] = [{**d, "note": "<script>alert(1)</script>", "licence": "a & b"} for d in hostile["datasets"]]
    write_report(tmp_path, suite, result.cells, [], hostile)
    for page in RUN_PAGES:
        html = (tmp_path / page.file).read_text(encoding="utf-8")
        assert "<script>alert" not in html and "<img src=x" not in html, page.file
    assert "&lt;img src=x onerror=alert(1)&gt; &amp; &#34;lr&#34;" in (tmp_path / "index.html").read_text("utf-8")
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in (tmp_path / "datasets.html").read_text("utf-8")
    templates = "".join(p.read_text(encoding="utf-8") for p in (PACKAGE / "templates").glob("*.html.j2"))
    assert re.findall(r"\|\s*safe", templates) == ["| safe"]             # our own SVG files, nothing else
    assert "{{ svg(path) | safe }}" in templates


def test_the_headline_table_is_ranked_and_every_combination_can_be_filtered(run):
    out, _, _ = run
    html = (out / "index.html").read_text(encoding="utf-8")
    table = html[html.index('<table class="ranked sortable" data-filters="learner resampler"'):]
    table = table[:table.index("</table>")]
    cells = re.findall(r'<td class="num" data-value="([0-9.]+)">[0-9.]+<span class="interval below">\[', table)
    ranks = [float(v) for v in cells]
    assert len(ranks) == 6 and ranks == sorted(ranks)                   # 3 resamplers x 2 learners, best first
    assert len(re.findall(r'<tr data-learner="[^"]+" data-resampler="(?:none|random-under|smote)">', table)) == 6


def test_score_rows_run_from_mild_to_strong_imbalance_then_by_rank():
    scores = pd.DataFrame([{"dataset": d, "ratio": "natural", "size": "all", "resampler": r, "learner": "lr",
                            "n_failed": 0, "n_cells": 2, "m_mean": v, "m_std": 0.0}
                           for d, values in (("hi", (0.9, 0.8)), ("lo", (0.5, 0.7))) for r, v in zip("ab", values)])
    suite = {"protocol": {"ratios": ["natural"], "sizes": ["all"]}, "metrics": ["m"]}
    rows = score_rows(scores, suite, {"hi": 12.0, "lo": 1.5})
    assert [(r["dataset"], r["resampler"], r["rank"], r["band"]) for r in rows] == [
        ("lo", "b", 1.0, "IR < 3"), ("lo", "a", 2.0, "IR < 3"),
        ("hi", "a", 1.0, "IR >= 9"), ("hi", "b", 2.0, "IR >= 9")]


def _orderings(counts):
    """A datasets x methods score table in which each ordering (best first) occurs counts[ordering] times."""
    rows = [{m: 3.0 - order.index(m) for m in "ABC"} for order, n in counts.items() for _ in range(n)]
    return pd.DataFrame(rows, index=[f"d{i}" for i in range(len(rows))])


def test_group_letters_follow_the_nemenyi_critical_difference():
    """18 datasets, mean ranks A 1.5, B 2.0, C 2.5. Nemenyi CD = q_0.05 sqrt(k(k+1) / 6N) with q_0.05 = 2.343
    for k = 3 (Demšar 2006, Table 5a) = 0.781: A and C (1.0 apart) differ, A-B and B-C do not, so the compact
    letter display (Piepho 2004) is A: a, B: ab, C: b."""
    result = compare(_orderings({"ABC": 9, "ACB": 3, "BAC": 3, "CBA": 3}))
    assert list(result.average_ranks) == [1.5, 2.0, 2.5]
    assert result.nemenyi.cd == pytest.approx(2.343 * np.sqrt(12 / (6 * 18)), abs=1e-3)
    assert result.friedman.decision_p < 0.05
    assert group_letters(result) == {"A": "a", "B": "ab", "C": "b"}
    assert top_group(result) == ["A", "B"]
    lines = verdict({"metric": "m", "point": "p", "result": result}, [], 0.05)
    assert lines == ["Overall (m at p, 18 datasets): A ranks first; not separated from it by the Nemenyi test: B."]


def test_no_letters_below_five_datasets_and_one_group_when_friedman_does_not_reject():
    few = compare(_orderings({"ABC": 4}))
    assert group_letters(few) == {} and top_group(few) == []
    assert "fewer than 5" in verdict({"metric": "m", "point": "p", "result": few}, [], 0.05)[0]
    level = compare(_orderings({"ABC": 2, "BCA": 2, "CAB": 2}))           # every method ranks 2 on average
    assert level.friedman.decision_p >= 0.05
    assert group_letters(level) == {"A": "a", "B": "a", "C": "a"}
    assert "no winner" in verdict({"metric": "m", "point": "p", "result": level}, [], 0.05)[0]
    row = {"by": "imbalance band", "band": "IR < 3", "point": "natural ratio, size all", "n": 3, "best": "A",
           "tied": [], "p": None, "claim": "no claim: only 3 datasets (fewer than 5)"}
    assert verdict(None, [row], 0.05)[1] == ("Imbalance band IR < 3 (natural ratio, size all, 3 datasets): "
                                             "no claim: only 3 datasets (fewer than 5).")


def test_the_rank_map_ranks_within_each_dataset_and_changes_no_global_setting(tmp_path):
    scores = pd.DataFrame({"x": [0.9, 0.5, np.nan], "y": [0.8, 0.5, 0.7], "z": [0.7, 0.6, 0.9]},
                          index=["d1", "d2", "d3"])
    ranks = ranks_by_dataset(scores)
    assert ranks.loc["d1"].tolist() == [1.0, 2.0, 3.0]
    assert ranks.loc["d2"].tolist() == [2.5, 2.5, 1.0]                  # ties share the mean rank
    assert np.isnan(ranks.loc["d3", "x"]) and ranks.loc["d3", ["y", "z"]].tolist() == [2.0, 1.0]
    before = dict(matplotlib.rcParams)
    paths = draw_rank_map(ranks, ["d1 (IR 2)", "d2 (IR 5)", "d3 (IR 20)"], str(tmp_path / "r"), "ranks")
    assert dict(matplotlib.rcParams) == before
    assert all(Path(p).stat().st_size > 1000 for p in paths)
    assert Path(paths[1]).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_the_static_files_are_declared_as_package_data():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    assert "static/*" in config["tool"]["setuptools"]["package-data"]["lopsided.report"]


# --- legibility: WCAG 2.1 contrast and colour-vision deficiency --------------------------------------

def _srgb(hex_colour):
    return np.array([int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])


def _linear(rgb):
    """sRGB -> linear RGB (IEC 61966-2-1; the WCAG 2.1 relative-luminance definition uses the same curve)."""
    return np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)


def contrast(a, b):
    """WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05), L = 0.2126 R + 0.7152 G + 0.0722 B (linear)."""
    la, lb = sorted((float(_linear(_srgb(c)) @ [0.2126, 0.7152, 0.0722]) for c in (a, b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def test_contrast_formula_matches_known_values():
    assert contrast("#000000", "#ffffff") == pytest.approx(21.0)                 # WCAG 2.1, the maximum
    assert contrast("#767676", "#ffffff") == pytest.approx(4.54, abs=0.01)      # lightest AA grey (from memory)


def _css():
    return (PACKAGE / "static" / "site.css").read_text(encoding="utf-8")


def test_every_text_colour_meets_wcag_aa_on_every_background():
    """Text roles (--text-*) on every light background (--bg-*), light text (--text-on-dark-*) on the dark
    ones (--bg-dark-*): at least 4.5:1 (WCAG 2.1, success criterion 1.4.3, level AA). Every definition is
    checked, the print overrides included, and every colour the stylesheet sets on text or a background
    goes through these roles."""
    css = _css()
    values = {}
    for name, value in re.findall(r"--((?:text|bg)-[a-z-]+):\s*(#[0-9a-fA-F]{6})", css):
        values.setdefault(name, set()).add(value)
    dark_text = {n for n in values if n.startswith("text-on-dark-")}
    dark_bg = {n for n in values if n.startswith("bg-dark-")}
    pairs = [*itertools.product(set(values) - dark_text - dark_bg - {n for n in values if n.startswith("bg-")},
                                {n for n in values if n.startswith("bg-")} - dark_bg),
             *itertools.product(dark_text, dark_bg)]
    assert len(pairs) >= 20
    for text, background in pairs:
        for a, b in itertools.product(values[text], values[background]):
            assert contrast(a, b) >= 4.5, f"--{text} {a} on --{background} {b}: {contrast(a, b):.2f}"
    for colour in re.findall(r"(?<![-\w])color:\s*([^;}]+)", css):
        assert re.fullmatch(r"var\(--text-[a-z-]+\)|inherit|currentColor", colour.strip()), colour
    for colour in re.findall(r"(?<![-\w])background(?:-color)?:\s*([^;}]+)", css):
        assert re.fullmatch(r"var\(--bg-[a-z-]+\)|none|transparent", colour.strip()), colour


def test_the_stylesheet_has_phone_and_print_layouts():
    css = _css()
    assert "@media (max-width: 40rem)" in css and "@media print" in css
    assert re.search(r"\.scroll \{[^}]*overflow-x: auto", css)                  # wide tables scroll sideways
    assert "http" not in css and "@import" not in css and "url(" not in css    # no downloaded font or file


# Machado, Oliveira & Fernandes (2009), IEEE TVCG 15(6): simulation matrices for severity 1.0, applied to
# linear RGB (values from memory; each row sums to 1, so white and greys stay as they are).
DEUTERANOPIA = np.array([[0.367322, 0.860646, -0.227968],
                         [0.280085, 0.672501, 0.047413],
                         [-0.011820, 0.042940, 0.968881]])
PROTANOPIA = np.array([[0.152286, 1.052583, -0.204868],
                       [0.114503, 0.786281, 0.099216],
                       [-0.003882, -0.048116, 1.051998]])


def _lab(linear_rgb):
    """Linear sRGB -> CIELAB (D65 white; sRGB primaries, IEC 61966-2-1; CIE 15:2004 L*a*b*)."""
    xyz = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]]) @ linear_rgb
    t = xyz / np.array([0.95047, 1.0, 1.08883])
    f = np.where(t > (6 / 29) ** 3, np.cbrt(t), t / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


def _seen(hex_colour, matrix):
    return _lab(np.clip(matrix @ _linear(_srgb(hex_colour)), 0, 1))


def test_the_simulation_matrices_behave_as_published():
    for matrix in (DEUTERANOPIA, PROTANOPIA):
        assert matrix.sum(axis=1) == pytest.approx([1, 1, 1], abs=1e-5)
        red, green = (_seen(c, matrix) for c in ("#d00000", "#00a000"))
        normal = np.linalg.norm(_seen("#d00000", np.eye(3)) - _seen("#00a000", np.eye(3)))
        assert np.linalg.norm(red - green) < normal / 3                  # red and green collapse


SERIES_CHECKED = 12  # every colour of the palette (suites draw up to 12 resampler series per figure)


def test_series_colours_stay_apart_for_deuteranopes():
    """The sweep figures' series colours, seen with deuteranopia (Machado et al. 2009, severity 1): every
    pair at least 10 CIE76 units apart (about four times the just-noticeable 2.3; common practice)."""
    seen = [_seen(c, DEUTERANOPIA) for c in COLOURS[:SERIES_CHECKED]]
    gaps = {(COLOURS[i], COLOURS[j]): np.linalg.norm(seen[i] - seen[j])
            for i, j in itertools.combinations(range(SERIES_CHECKED), 2)}
    assert min(gaps.values()) >= 10, min(gaps.items(), key=lambda kv: kv[1])


def test_the_rank_ramp_keeps_its_order_in_every_simulation():
    """Lightness must fall steadily from the worst rank to the best for normal vision, deuteranopia and
    protanopia alike, so the map reads the same for everyone and in greyscale."""
    samples = [matplotlib.colors.to_hex(RAMP(x)) for x in np.linspace(0, 1, 64)]
    for matrix in (np.eye(3), DEUTERANOPIA, PROTANOPIA):
        lightness = [_seen(c, matrix)[0] for c in samples]
        assert np.all(np.diff(lightness) > 0), "lightness must rise from best (dark) to worst (pale)"
        assert lightness[-1] - lightness[0] > 60


def test_stats_and_site_agree_on_the_headline_comparison(run):
    out, _, _ = run
    stats = json.loads((out / "stats.json").read_text(encoding="utf-8"))
    main = next(c for c in stats["comparisons"] if c["view"] == "all" and c["metric"] == "balanced_accuracy")
    html = (out / "index.html").read_text(encoding="utf-8")
    best = next(iter(main["average_ranks"]))
    assert f'<th scope="row" class="method">{markupsafe.escape(best)}</th>' in html
