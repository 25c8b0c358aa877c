"""``lumeval history``: the production history — recorded lots, control charts, migrations.

Python twins: :func:`lumeval.store.list_lots`, :func:`lumeval.store.trend`,
:func:`lumeval.store.migrate`. The store is written by ``lumeval lot ... --store URL``; the
small hook that command calls after writing its other outputs is :func:`record_after_lot`.

Exit codes: 0 done (a trend with signals is still 0 unless ``--fail-on-signal``), 1 a trend
with signals and ``--fail-on-signal``, 2 bad usage or a store that cannot be opened, read or
written (one line naming the store; never a traceback).
"""

from __future__ import annotations

import sys
from enum import Enum
from pathlib import Path

import typer

from .._paths import command_line
from ._text import require_utf8


class ListFormat(str, Enum):
    terminal = "terminal"
    json = "json"


class ChartKind(str, Enum):
    auto = "auto"
    xbar_s = "xbar-s"
    individuals = "individuals"


# --------------------------------------------------------------------------- the lot hook


def parse_trend_figures(text: str | None) -> list[str]:
    """``--trend-figures duv,R9`` -> resolved figure names (unknown names: exit 2 before any work)."""
    if text is None:
        return []
    from ..store.db import StoreError
    from ..store.trend import resolve_figure

    out = []
    for part in str(text).split(","):
        if part.strip():
            try:
                name = resolve_figure(part.strip())[0]
            except StoreError as exc:  # named as the option the user gave (it said '--figure')
                raise StoreError(exc.problem, field="--trend-figures", fix=exc.fix) from None
            if name not in out:
                out.append(name)
    return out


def check_store_options(store, lot_id, product, trend_figures, fail_on_signal, baseline=None,
                        baseline_count=None) -> list[str]:
    """Validate ``lot``'s store options before any work: the store URL's form, the trend
    figures and the alarm baseline (``--baseline A..B`` / ``--baseline-count K``, checked as
    ``history trend`` checks them). Returns the resolved trend figures."""
    from ..errors import UsageError

    for opt, v in (("--lot-id", lot_id), ("--product", product)):
        require_utf8(opt, v)
    if store is None:
        given = [o for o, v in (("--lot-id", lot_id), ("--product", product), ("--trend-figures", trend_figures),
                                ("--fail-on-signal", fail_on_signal or None), ("--baseline", baseline),
                                ("--baseline-count", baseline_count)) if v is not None]
        if given:
            raise UsageError(f"{given[0]} needs --store", field=given[0], fix="add --store PATH_OR_URL")
        return []
    from ..store.db import parse_store_url

    # the URL's form before any work: a URL that cannot be used left the store file out of the
    # outputs-vs-inputs check, and `--json history.db` then replaced every recorded lot before the
    # store error came (found by a review)
    parse_store_url(store)
    figures = parse_trend_figures(trend_figures)
    if baseline is not None or baseline_count is not None:
        from ..store.trend import baseline_mask

        opt = "--baseline" if baseline is not None else "--baseline-count"
        if not figures:
            raise UsageError(f"{opt} chooses the alarm baseline: it needs --trend-figures", field=opt,
                             fix="add --trend-figures FIGURES, or leave the option out")
        baseline_mask([], baseline, baseline_count)  # the form, as `history trend` checks it
    return figures


def record_after_lot(run, criteria, *, store, lot_id=None, product=None, trend_figures=None,
                     fail_on_signal: bool = False, exit_code: int = 0, criteria_path=None, baseline=None,
                     baseline_count=None) -> int:
    """Record a judged lot and report new control-chart signals (``lot --store``).

    Called after the lot's other outputs are written, so that a store that cannot be reached
    costs nothing else: a store error is one line on standard error and exit code 2. Messages
    go to standard error (standard output may carry the lot's JSON or CSV). Returns the exit
    code: ``exit_code`` unchanged, 2 on a store error, at least 1 when the lot triggers a
    signal and ``fail_on_signal``.

    The alarms judge the lot by its store number (:func:`lumeval.store.alarm.alarm_trend`):
    against the lots recorded before it, never itself or later lots; a lot already recorded
    gets the signals it got at its place. ``baseline``/``baseline_count`` replace the default
    alarm baseline.
    """
    if store is None:
        return exit_code
    from ..store.db import StoreError
    from ..store.record import lot_record, record_lot

    figures = parse_trend_figures(trend_figures)
    if run.unreadable:
        print("lumeval: error: the lot is not recorded in the store: some inputs could not be read, so it is not "
              "fully judged", file=sys.stderr)
        return 2
    try:
        rec = lot_record(run, criteria=criteria, lot_id=lot_id, product=product, criteria_path=criteria_path)
        res = record_lot(store, rec)
    except StoreError as exc:
        print(f"lumeval: error: {exc.message} (the lot's other outputs are written; the lot is not recorded)",
              file=sys.stderr)
        return 2
    except OSError as exc:
        print(f"lumeval: error: {getattr(exc, 'filename', '') or ''}: cannot be hashed for the store "
              f"({exc.strerror or exc}); the lot is not recorded", file=sys.stderr)
        return 2
    from ..render.trend_report import plain

    print(f"lumeval: {plain(res.message)}", file=sys.stderr)
    n_signals = 0
    charted = []
    for fig in figures:
        try:
            tr = _trend_for(store, fig, res.lot_id, baseline=baseline, baseline_count=baseline_count)
        except StoreError as exc:
            if exc.field in ("--baseline", "--baseline-count"):  # the user's own baseline: an error
                print(f"lumeval: error: {exc.message} (the lot is recorded)", file=sys.stderr)
                exit_code = max(exit_code, 2)
                continue
            print(f"lumeval: note: no control chart of {fig} yet ({plain(exc.problem)})", file=sys.stderr)
            continue
        charted.append(fig)
        left = tr.extra.get("left_out") or []
        if left:
            shown = "; ".join(f"lot {lot} ({why})" for lot, why in left[:10])
            more = f"; and {len(left) - 10} more" if len(left) > 10 else ""
            print(f"lumeval: note: {fig} alarm leaves out of its baseline and charts {shown}{more}", file=sys.stderr)
        from ..render.trend_report import signal_lines

        lines = signal_lines(tr, res.lot_id)
        for line in lines:
            n_signals += 1
            print(f"lumeval: signal: {line}", file=sys.stderr)
        if lines:
            given = (f" --baseline {plain(baseline)}" if baseline is not None
                     else f" --baseline-count {baseline_count}" if baseline_count is not None else "")
            print(f"lumeval: note: the {fig} charts that gave it: lumeval history trend --store STORE --figure {fig} "
                  f"--as-judged {plain(res.lot_id)}{given} --html FILE", file=sys.stderr)
    if charted and not n_signals:
        print(f"lumeval: no control-chart signal for lot {plain(res.lot_id)} ({', '.join(charted)})", file=sys.stderr)
    if n_signals and fail_on_signal:
        return max(exit_code, 1)
    return exit_code


def _trend_for(store, figure: str, lot_id: int, *, baseline=None, baseline_count=None):
    """The alarm's trend of recorded lot ``lot_id`` (:func:`lumeval.store.alarm.alarm_trend`)."""
    from ..store.alarm import alarm_trend

    return alarm_trend(store, figure, lot_id, baseline=baseline, baseline_count=baseline_count)


# --------------------------------------------------------------------------- commands


def register(app: typer.Typer) -> None:
    history = typer.Typer(
        name="history",
        help="The production history: lots recorded by `lumeval lot --store`, control charts over them.",
        no_args_is_help=True,
        add_completion=False,
        rich_markup_mode=None,
    )
    app.add_typer(history, name="history")

    store_opt = typer.Option(..., "--store", "-s", help="The store: a path (SQLite), sqlite:///path.db or "
                             "postgresql://user@host:port/db.", show_default=False)

    @history.command("list")
    def list_cmd(
        store: str = store_opt,
        product: str = typer.Option(None, "--product", "-p", help="Only lots of this product.", show_default=False),
        since: str = typer.Option(None, "--since", help="Only lots recorded on or after this date (ISO, UTC).",
                                  show_default=False),
        output_format: ListFormat = typer.Option(ListFormat.terminal, "--format", "-f", help="terminal or json."),
    ) -> None:
        """List the recorded lots: number, label, product, time, samples, yield, lot verdict."""
        require_utf8("--product", product)
        from ..store.db import parse_store_url
        from ..store.query import list_lots

        su = parse_store_url(store)
        lots = list_lots(su, product=product, since=since)
        from ..render import trend_report

        if output_format is ListFormat.json:
            import json

            sys.stdout.write(json.dumps(trend_report.list_document(lots, su.shown), indent=1, ensure_ascii=False,
                                        allow_nan=False) + "\n")
        else:
            trend_report.print_list(lots, su.shown)

    @history.command("trend")
    def trend_cmd(
        store: str = store_opt,
        figure: str = typer.Option(..., "--figure", "-F", help="The figure to chart (duv, cct_K, Ra, R9, Rf, ...; "
                                   "or centroid_duv_centre, centroid_edge_margin).", show_default=False),
        product: str = typer.Option(None, "--product", "-p", help="The product (needed when the store holds several).",
                                    show_default=False),
        baseline: str = typer.Option(None, "--baseline", help="Baseline lots A..B (store numbers, inclusive).",
                                     show_default=False),
        baseline_count: int = typer.Option(None, "--baseline-count", help="Baseline: the first K lots "
                                           "(default: the first 20).", show_default=False),
        chart: ChartKind = typer.Option(ChartKind.auto, "--chart", help="auto (X̄/s for lots of several samples, "
                                        "else individuals), xbar-s, or individuals (lot means as single values)."),
        output_format: ListFormat = typer.Option(ListFormat.terminal, "--format", "-f", help="terminal or json."),
        html: Path = typer.Option(None, "--html", help="Also write a self-contained HTML trend report to this file.",
                                  show_default=False),
        fail_on_signal: bool = typer.Option(False, "--fail-on-signal", help="Exit 1 when any lot gives a signal."),
        as_judged: int = typer.Option(None, "--as-judged", help="The charts the alarm of `lot --trend-figures` judged "
                                      "recorded lot N with: the lots up to N and the alarm's default baseline (or "
                                      "--baseline / --baseline-count as given to it; --chart auto, as the alarm).",
                                      show_default=False, min=1, max=2**63 - 1),
    ) -> None:
        """Control charts of a figure over the recorded lots, with Western Electric signals."""
        require_utf8("--product", product)
        from ..store.db import StoreError, parse_store_url
        from ..store.trend import CHROMATICITY_FIGURES, trend
        from ._targets import check_targets

        su = parse_store_url(store)
        check_targets(files={"--html": html}, inputs=[su.sqlite_path] if su.sqlite_path else [])
        if as_judged is not None and (product is not None or chart is not ChartKind.auto):
            from ..errors import UsageError

            opt = "--product" if product is not None else "--chart"
            raise UsageError(f"--as-judged draws the alarm's own charts (the product the lot was recorded with, chart "
                             f"auto): give it without {opt}", field=opt, fix=f"drop {opt}")

        def charts(f: str, kind: str, of_product: str | None, exact: bool):
            if as_judged is not None:  # the alarm's own charts of that lot
                from ..store.alarm import alarm_trend

                return alarm_trend(su, f, as_judged, baseline=baseline, baseline_count=baseline_count, chart=kind)
            return trend(su, f, product=of_product, baseline=baseline, baseline_count=baseline_count, chart=kind,
                         exact_product=exact)

        tr = charts(figure, chart.value, product, False)
        from ..render import trend_report

        if html is not None:
            extra = []
            if tr.figure not in CHROMATICITY_FIGURES:
                for f in CHROMATICITY_FIGURES:
                    try:
                        extra.append(charts(f, "auto", tr.product, True))
                    except StoreError:
                        pass  # no category recorded with these lots
            trend_report.write_trend_html(html, tr, chromaticity=extra, command=command_line())
        if output_format is ListFormat.json:
            sys.stdout.write(trend_report.trend_json(tr))
        else:
            trend_report.print_trend(tr)
        sys.exit(1 if fail_on_signal and tr.signals else 0)

    @history.command("migrate")
    def migrate_cmd(store: str = store_opt) -> None:
        """Migrate a store written by an older lumeval to this lumeval's schema (back it up first)."""
        from ..store.db import SCHEMA_VERSION, migrate_report, parse_store_url

        su = parse_store_url(store)
        before, after, added = migrate_report(su)
        indexes = f"; added the index {', '.join(added)}" if added else ""
        if before == after and not added:
            print(f"{su.shown}: already at schema version {SCHEMA_VERSION}; nothing to do")
        elif before == after:
            print(f"{su.shown}: at schema version {SCHEMA_VERSION}{indexes}")
        else:
            print(f"{su.shown}: migrated from schema version {before} to {after}{indexes}")
