"""The leaderboard site without a browser: the page table, self-contained output, escaping, significance
letters and verdict sentences, the rank map and its text colours, text contrast (WCAG) and colours under
colour-vision deficiency (Machado et al. 2009)."""
import dataclasses
import itertools
import json
import re
import tomllib
from pathlib import Path
from types import SimpleNamespace

import jinja2
import markupsafe
import matplotlib
import numpy as np
import pandas as pd
import pytest

from lopsided.analysis import compare
from lopsided.analysis.multiplicity import single
from lopsided.analysis.words import claims
from lopsided.jobs.run import run_suite
from lopsided.options import ExecutionOptions, RunOptions
from lopsided.planning.suite import load_suite
from lopsided.report import ENV, group_letters, heatmap, make_board
from lopsided.report.answers import signed
from lopsided.report.citations import formatted
from lopsided.report.figures import COLOURS
from lopsided.report.heatmap import RAMP, draw_rank_map, ranks_by_dataset
from lopsided.report.site import Page, pages, score_rows, write_site

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "lopsided" / "report"
QUIET = ExecutionOptions(progress=False)   # no progress bar in tests
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
    """One small run whose learner label is hostile HTML: (folder, run result, its Board, its pages)."""
    folder = tmp_path_factory.mktemp("site")
    suite = folder / "films.toml"
    suite.write_text(SUITE.replace("LEARNER", HOSTILE), encoding="utf-8")
    result = run_suite(suite, RunOptions(out=folder / "out", execution=QUIET))
    figures = folder / "figures"
    figures.mkdir()
    board = make_board(load_suite(suite), result.cells, result.summary, figures)
    return folder / "out", result, board, pages(board)


def test_every_page_of_the_table_is_written_with_the_menu_and_its_own_template(run):
    out, _, _, found = run
    assert found[0].file == "index.html" and len({p.file for p in found}) == len(found)
    assert not (out / "try.html").exists()          # a page only `lopsided try` folders have
    menu = [p for p in found if p.menu]
    assert [p.file for p in found if not p.menu] == ["point-natural-all-mcc.html", "point-2-all-balanced_accuracy.html",
                                                     "per-dataset-2.html"]          # one page per learner
    for page in found:
        assert (PACKAGE / "templates" / page.template).is_file(), page.template
        html = (out / page.file).read_text(encoding="utf-8")
        assert all(f'href="{p.file}"' in html for p in menu)
        assert "research evidence" in html.lower()                        # the caution, on every page
        if page.menu:
            assert f'<a href="{page.file}" aria-current="page">{page.title}</a>' in html
    first = (out / "point-natural-all-balanced_accuracy.html").read_text(encoding="utf-8")
    assert 'href="point-2-all-balanced_accuracy.html"' in first and 'href="point-natural-all-mcc.html"' in first
    assert 'href="per-dataset-2.html"' in (out / "per-dataset-1.html").read_text(encoding="utf-8")


def test_a_new_page_is_one_entry_and_one_template(run, tmp_path):
    _, _, board, _ = run
    env = ENV.overlay(loader=jinja2.ChoiceLoader([
        jinja2.DictLoader({"extra.html.j2": '{% extends "base.html.j2" %}{% block content %}'
                                            '<p id="n">{{ count }} datasets</p>{% endblock %}'}),
        ENV.loader]))
    extra = Page("extra.html", "extra.html.j2", "Extra", lambda board: {"count": len(board.suite.datasets)})
    write_site(env, tmp_path, board, chosen=(extra,))
    html = (tmp_path / "extra.html").read_text(encoding="utf-8")
    assert '<p id="n">3 datasets</p>' in html and (tmp_path / "static" / "site.css").is_file()


def test_every_page_stays_under_400_kilobytes_of_html(run):
    out, _, _, found = run
    assert all((out / p.file).stat().st_size < 400_000 for p in found)


def test_the_folder_is_self_contained(run):
    """Every stylesheet, script, image and link of every page is a file in the folder: nothing remote."""
    out, _, _, found = run
    for page in found:
        html = (out / page.file).read_text(encoding="utf-8")
        assert not re.search(r'<(?:link|script|img|iframe)[^>]+(?:src|href)="(?:https?:)?//', html), page.file
        for target in re.findall(r'(?:href|src)="([^"#]+)"', html):
            if not target.startswith("data:"):                            # inline: the rank map's raster
                assert (out / target).is_file(), f"{page.file}: {target} is missing"
    assert (out / "static" / "site.js").is_file() and (out / "figures").is_dir()


def test_names_from_the_data_are_escaped_everywhere(run, tmp_path):
    """The run's learner label is hostile HTML; the dataset notes and licences of its manifest become so too.
    The site is written from the run's Board with that manifest (what write_report renders its pages from)."""
    _, result, board, found = run
    hostile = dataclasses.replace(result.summary, datasets=tuple(
        dataclasses.replace(d, note="<script>alert(1)</script>", licence="a & b") for d in result.summary.datasets))
    write_site(ENV, tmp_path, dataclasses.replace(board, summary=hostile))
    for page in found:
        html = (tmp_path / page.file).read_text(encoding="utf-8")
        assert "<script>alert" not in html and "<img src=x" not in html, page.file
    assert "&lt;img src=x onerror=alert(1)&gt; &amp; &#34;lr&#34;" in (tmp_path / "index.html").read_text("utf-8")
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in (tmp_path / "datasets.html").read_text("utf-8")
    templates = "".join(p.read_text(encoding="utf-8") for p in (PACKAGE / "templates").glob("*.html.j2"))
    assert not re.findall(r"\|\s*safe", templates)                       # figures are files: nothing unescaped


def test_the_headline_table_is_ranked_and_every_combination_can_be_filtered(run):
    out, _, _, _ = run
    html = (out / "index.html").read_text(encoding="utf-8")
    table = html[html.index('<table class="ranked sortable sticky-first" data-filters="learner resampler"'):]
    table = table[:table.index("</table>")]
    cells = re.findall(r'<td class="num" data-value="([0-9.]+)">[0-9.]+<span class="interval below">\[', table)
    ranks = [float(v) for v in cells]
    assert len(ranks) == 6 and ranks == sorted(ranks)                   # 3 resamplers x 2 learners, best first
    assert len(re.findall(r'<tr data-learner="[^"]+" data-resampler="(?:none|random-under|smote)">', table)) == 6


def test_score_rows_run_from_mild_to_strong_imbalance_then_by_rank():
    scores = pd.DataFrame([{"dataset": d, "ratio": "natural", "size": "all", "resampler": r, "learner": "lr",
                            "n_failed": 0, "n_cells": 2, "m_mean": v, "m_std": 0.0}
                           for d, values in (("hi", (0.9, 0.8)), ("lo", (0.5, 0.7))) for r, v in zip("ab", values)])
    board = SimpleNamespace(primary=SimpleNamespace(metric="m", ratio="natural", size="all"), scores=scores,
                            suite=SimpleNamespace(metrics=("m",)), short={"hi": "hi", "lo": "lo"},
                            imbalance={"hi": 12.0, "lo": 1.5})
    listed = score_rows(board)
    assert listed["all_rows"]
    assert [(r["dataset"], r["resampler"], r["rank"], r["band"]) for r in listed["rows"]] == [
        ("lo", "b", 1.0, "IR < 3"), ("lo", "a", 2.0, "IR < 3"),
        ("hi", "a", 1.0, "IR >= 9"), ("hi", "b", 2.0, "IR >= 9")]


def test_a_long_score_table_keeps_every_dataset_even_when_its_best_combinations_tie(monkeypatch):
    """Above ROWS_AT_MOST rows each dataset keeps its best few combinations; on "tied" 8 of 10 combinations
    share the best score (average rank 4.5 each: a cut by average rank <= 5 would keep all 8, by <= 4 none)."""
    monkeypatch.setattr("lopsided.report.site.ROWS_AT_MOST", 15)
    values = {"tied": [1.0] * 8 + [0.5, 0.4], "spread": [i / 10 for i in range(10)]}
    scores = pd.DataFrame([{"dataset": d, "ratio": "natural", "size": "all", "resampler": f"r{i}", "learner": "lr",
                            "n_failed": 0, "n_cells": 2, "m_mean": v, "m_std": 0.0}
                           for d, vs in values.items() for i, v in enumerate(vs)])
    board = SimpleNamespace(primary=SimpleNamespace(metric="m", ratio="natural", size="all"), scores=scores,
                            suite=SimpleNamespace(metrics=("m",)), short={d: d for d in values},
                            imbalance={"tied": 2.0, "spread": 4.0})
    listed = score_rows(board)
    assert not listed["all_rows"] and listed["top"] == 5                 # min(5, 15 // 2 datasets)
    shown = {d: [r["resampler"] for r in listed["rows"] if r["dataset"] == d] for d in values}
    assert shown == {"tied": ["r0", "r1", "r2", "r3", "r4"], "spread": ["r9", "r8", "r7", "r6", "r5"]}
    monkeypatch.setattr("lopsided.report.site.ROWS_AT_MOST", 7)            # fewer rows allowed: 3 per dataset
    assert [r["resampler"] for r in score_rows(board)["rows"]] == ["r0", "r1", "r2", "r9", "r8", "r7"]


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
    assert group_letters(result, single(result)) == {"A": "a", "B": "ab", "C": "b"}
    lines = claims(result)
    assert lines[1] == ("A ranks first; the Nemenyi test (alpha = 0.05, CD = 0.781 ranks) separates it from 1 of the "
                        "other 2: C; the other 1 are not separated from it (which is not evidence that they are equal).")


def test_no_letters_below_five_datasets_nor_when_friedman_does_not_reject():
    few = compare(_orderings({"ABC": 4}))
    assert group_letters(few, single(few)) == {}
    assert "No significance claim" in claims(few)[0]
    level = compare(_orderings({"ABC": 2, "BCA": 2, "CAB": 2}))           # every method ranks 2 on average
    assert level.friedman.decision_p >= 0.05
    assert group_letters(level, single(level)) == {}                       # no post-hoc claim without the omnibus
    assert "does not reject" in claims(level)[0] and "exploratory only" in claims(level)[1]


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


def test_the_rank_maps_numbers_take_the_text_colour_with_more_contrast():
    """heatmap.py writes a rank in white on cells darker than WHITE_BELOW (relative luminance), else in ink:
    WHITE_BELOW must be where both have the same WCAG 2.1 contrast (3.8:1, as heatmap.py says), so every cell
    of the ramp gets the better of the two, and heatmap's luminance must be WCAG's. The contrast helper is
    first checked against known WCAG 2.1 values: 21:1 for black on white (the maximum) and 4.54:1 for #767676
    on white (the lightest AA grey; from memory)."""
    assert contrast("#000000", "#ffffff") == pytest.approx(21.0)
    assert contrast("#767676", "#ffffff") == pytest.approx(4.54, abs=0.01)
    ink = float(_linear(_srgb(heatmap.INK)) @ [0.2126, 0.7152, 0.0722])
    equal = np.sqrt(1.05 * (ink + 0.05)) - 0.05          # (1 + 0.05) / (L + 0.05) = (L + 0.05) / (ink + 0.05)
    assert heatmap.WHITE_BELOW == pytest.approx(equal, abs=0.005)
    assert 1.05 / (equal + 0.05) == pytest.approx(3.8, abs=0.05)
    for x in np.linspace(0, 1, 101):
        cell = matplotlib.colors.to_hex(RAMP(x))
        luminance = heatmap._luminance(matplotlib.colors.to_rgba(cell))
        assert luminance == pytest.approx(float(_linear(_srgb(cell)) @ [0.2126, 0.7152, 0.0722]), abs=1e-12)
        chosen, other = ("#ffffff", heatmap.INK) if luminance < heatmap.WHITE_BELOW else (heatmap.INK, "#ffffff")
        assert contrast(chosen, cell) >= 0.99 * contrast(other, cell), cell


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


SERIES = 12  # suites draw up to 12 resampler series per figure: the palette has a colour for each


def test_series_colours_stay_apart_in_normal_vision_and_for_deuteranopes_and_protanopes():
    """The sweep figures' series colours (figures.py: every pair at least 13 CIE76 units apart in normal
    vision and under simulated deuteranopia and protanopia, Machado et al. 2009, severity 1; 13 is over five
    times the just-noticeable 2.3, common practice). The simulation itself is checked first: each matrix row
    sums to 1 (greys stay grey, as published) and a strong red and green collapse to under a third of their
    normal distance."""
    normal = np.linalg.norm(_seen("#d00000", np.eye(3)) - _seen("#00a000", np.eye(3)))
    for matrix in (DEUTERANOPIA, PROTANOPIA):
        assert matrix.sum(axis=1) == pytest.approx([1, 1, 1], abs=1e-5)
        assert np.linalg.norm(_seen("#d00000", matrix) - _seen("#00a000", matrix)) < normal / 3
    assert len(COLOURS) == SERIES
    for matrix in (np.eye(3), DEUTERANOPIA, PROTANOPIA):
        seen = [_seen(c, matrix) for c in COLOURS]
        gaps = {(COLOURS[i], COLOURS[j]): np.linalg.norm(seen[i] - seen[j])
                for i, j in itertools.combinations(range(SERIES), 2)}
        assert min(gaps.values()) >= 13, min(gaps.items(), key=lambda kv: kv[1])


def test_the_rank_ramp_keeps_its_order_in_every_simulation():
    """Lightness must fall steadily from the worst rank to the best for normal vision, deuteranopia and
    protanopia alike, so the map reads the same for everyone and in greyscale."""
    samples = [matplotlib.colors.to_hex(RAMP(x)) for x in np.linspace(0, 1, 64)]
    for matrix in (np.eye(3), DEUTERANOPIA, PROTANOPIA):
        lightness = [_seen(c, matrix)[0] for c in samples]
        assert np.all(np.diff(lightness) > 0), "lightness must rise from best (dark) to worst (pale)"
        assert lightness[-1] - lightness[0] > 60


def test_stats_and_site_agree_on_the_headline_comparison(run):
    out, _, _, _ = run
    stats = json.loads((out / "stats.json").read_text(encoding="utf-8"))
    main = next(c for c in stats["comparisons"] if c["view"] == "all" and c["metric"] == "balanced_accuracy")
    html = (out / "index.html").read_text(encoding="utf-8")
    best = next(iter(main["average_ranks"]))
    assert f'<th scope="row" class="method">{markupsafe.escape(best)}</th>' in html


def test_a_difference_that_rounds_to_zero_keeps_its_digits_and_its_sign():
    assert [signed(v) for v in (0.0842, -0.0366, -0.00031, 0.000049, -0.00049, 0.0, 3e-7)] == [
        "+0.084", "-0.037", "-0.00031", "+0.000049", "-0.00049", "0.000", "0.000"]


def test_references_read_as_text_not_as_bibtex():
    """Accents, TeX quotes and dashes, a thesis's school and a series volume, as a reader expects them."""
    thesis = formatted("@phdthesis{n,\n  author = {Nemenyi, Peter Bjorn},\n  title = {Distribution-free Multiple "
                       "Comparisons},\n  school = {Princeton University},\n  year = {1963}\n}")
    assert thesis == "Nemenyi, Peter Bjorn (1963). Distribution-free Multiple Comparisons. PhD thesis, Princeton University."
    article = formatted("@article{a,\n  author = {Derrac, Joaqu{\\'\\i}n and Garc{\\'\\i}a, Salvador},\n  title = "
                        "{A ``quoted'' title},\n  journal = {J},\n  volume = {17},\n  number = {2--3},\n  pages = "
                        "{255--287},\n  year = {2011}\n}")
    assert article == "Derrac, Joaquín & García, Salvador (2011). A “quoted” title. J, 17(2–3), 255–287."
    run = formatted("@misc{r,\n  title = {Leaderboard of the suite ``keel''},\n  year = {2026}\n}")
    assert run == "Leaderboard of the suite “keel” (2026)."
