"""``jointwright study STUDY``: run a trade study into a SQLite store, resumably."""

from __future__ import annotations

from pathlib import Path

import click

from ..units import pretty_unit
from ._format import console, emit_json, num, table

#: exit status when the study ran but some or all of its cases failed (bad input: 2)
EXIT_CASES_FAILED = 3
#: failed cases listed in the summary
SHOWN_FAILURES = 5


@click.command("study")
@click.argument("study", type=click.Path(path_type=Path))
@click.option(
    "--store",
    type=click.Path(path_type=Path),
    default=None,
    help="SQLite results file (default: results.sqlite beside the study file)",
)
@click.option(
    "--workers", type=click.IntRange(min=1), default=None, help="local processes (default: cores)"
)
@click.option("--scheduler", default=None, help="Dask scheduler address, e.g. tcp://127.0.0.1:8786")
@click.option("--resume", is_flag=True, help="run only the cases the store lacks")
@click.option("--restart", is_flag=True, help="start the store anew (the old file is kept as .bak)")
@click.option("--retry-failed", is_flag=True, help="with --resume, run failed cases again")
@click.option(
    "--csv",
    "csv_path",
    type=click.Path(path_type=Path),
    default=None,
    help="also export the summary table as CSV",
)
@click.option("--force", is_flag=True, help="replace an existing --csv file")
@click.option("--json", "as_json", is_flag=True, help="machine-readable summary")
def command(
    study: Path,
    store: Path | None,
    workers,
    scheduler,
    resume,
    restart,
    retry_failed,
    csv_path,
    force,
    as_json,
):
    """Run every case of STUDY (sizing or frontier per case); each finished case is stored at once,
    so an interrupted run loses nothing and --resume goes on where it stopped.

    Exit status: 0 every case done; 3 some or all cases failed (listed on stderr); 2 bad input
    or a fault (nothing lost; resume)."""
    from ..errors import InputError
    from ..study import export_csv, load_study, run_study
    from ._output import check_target

    if workers is not None and scheduler is not None:
        raise InputError(str(study), "--workers", "give either --workers or --scheduler, not both")
    store = store or study.with_name("results.sqlite")
    spec = load_study(study)
    named = spec.definition["study"].get("inputs", [])
    inputs = {study, spec.base_file, *(spec.base_dir / f for f in named)}
    check_target(store, "--store", inputs=inputs, force=True)
    if csv_path is not None:
        check_target(csv_path, "--csv", inputs=inputs | {store}, force=force)
    outcome = run_study(
        spec,
        store,
        workers=workers,
        scheduler=scheduler,
        resume=resume,
        restart=restart,
        retry_failed=retry_failed,
        progress=not as_json,
    )
    if csv_path is not None:
        export_csv(store, csv_path)
    from ..study import read_cases

    rows = read_cases(store)
    failures = [
        {"case_id": r.case_id, "variant": r.variant, "params": r.params, "error": r.error}
        for r in rows
        if r.status == "failed"
    ]
    if as_json:
        emit_json(
            {
                "store": str(outcome.store),
                "total": outcome.total,
                "done": outcome.done_total,
                "failed": outcome.failed_total,
                "skipped": outcome.skipped,
                "wall_time": outcome.wall_time,
                "case_time": outcome.case_time,
                "workers": outcome.workers,
                "backend": outcome.backend,
                "failures": failures[:SHOWN_FAILURES],
            }
        )
        if failures:
            raise SystemExit(EXIT_CASES_FAILED)
        return
    con = console()
    con.print(
        f"study {study}: {outcome.done_total} done, {outcome.failed_total} failed of "
        f"{outcome.total} cases ({outcome.skipped} already stored); {outcome.wall_time:.1f} s "
        f"on {_slots(outcome.workers, outcome.backend)}; results in {outcome.store}"
    )
    con.print(case_table(spec.name, rows, max_rows=40, order=[p.path for p in spec.parameters]))
    for why, numbers in infeasible_reasons(rows).items():
        con.print(f"infeasible ({_case_list(numbers)}): {why}")
    con.print(
        "objective: the payload mass every case carries (kg) when sizing for payload, the "
        "actuator mass (kg) for mass, the IMF for imf. All metrics: --csv FILE, or open the "
        "SQLite store."
    )
    if csv_path is not None:
        con.print(f"summary written to {csv_path}")
    if failures:
        print_failures(failures, len(rows), store)
        raise SystemExit(EXIT_CASES_FAILED)


def print_failures(failures: list[dict], stored: int, store: Path) -> None:
    """The count and the first errors of the failed cases, on stderr (the table is on stdout)."""
    import click

    click.echo(
        f"jointwright: {len(failures)} of {stored} stored cases failed; first "
        f"{min(len(failures), SHOWN_FAILURES)}:",
        err=True,
    )
    for f in failures[:SHOWN_FAILURES]:
        where = ", ".join(f"{k} = {v!r}" for k, v in f["params"].items())
        label = f"{f['case_id']}" + (f" ({f['variant']})" if f["variant"] else "")
        click.echo(f"  {label} [{where}]: {f['error']}", err=True)
    click.echo(
        f"  all errors and tracebacks: the cases table of {store}. To run them again as they "
        "are (a fault of the machine, a stopped worker): --resume --retry-failed; after "
        "changing the study file or its inputs: --restart (the store is tied to their "
        "content; the old store is kept as a backup)",
        err=True,
    )


def infeasible_reasons(rows) -> dict[str, list[int]]:
    """The infeasible cases' reasons as the search gave them (without the diagnosis, which a
    study does not run), each with the case numbers (1-based, as in the table)."""
    out: dict[str, list[int]] = {}
    for r in rows:
        if r.metrics.get("sizing_status") == "infeasible" and r.metrics.get("why"):
            out.setdefault(str(r.metrics["why"]), []).append(r.index + 1)
    return out


def _case_list(numbers: list[int], shown: int = 8) -> str:
    head = ", ".join(f"#{k}" for k in numbers[:shown])
    return head + (f" and {len(numbers) - shown} more" if len(numbers) > shown else "")


#: short status words for the terminal table
_STATUS = {"optimal": "optimal", "infeasible": "infeasible", "time_limit": "time limit"}


def case_table(name: str, rows, *, max_rows: int, order=()):
    """The cases as a table that fits the terminal: the varied values (named by their last path
    part, in the study file's ``[[vary]]`` order ``order``), status, objective, gap, actuator
    mass and time; identifiers and every other metric stay in the store and the CSV export."""
    from ..units import format_number

    seen = list(dict.fromkeys(k for r in rows for k in r.params))
    params = [k for k in order if k in seen] + [k for k in seen if k not in order]
    variants = any(r.variant for r in rows)
    if variants:  # a value fixed within every variant but not across them is the variant's
        # setting: the variant names it (a [[vary]] parameter of one value stays)
        def varies(k: str) -> bool:
            everywhere = {_param_text(r.params[k]) if k in r.params else None for r in rows}
            within = any(
                len({_param_text(r.params.get(k, "")) for r in rows if r.variant == v}) > 1
                for v in {r.variant for r in rows}
            )
            return within or (len(everywhere) == 1 and None not in everywhere)

        params = [k for k in params if varies(k)]
    short = {k: k.rsplit(".", 1)[-1] for k in params}
    # the gap only when a case stopped at its time limit (an optimal case is within the gap)
    stopped = any(r.metrics.get("sizing_status") == "time_limit" for r in rows[:max_rows])
    cols = (
        ["#"]
        + (["variant"] if variants else [])
        + [short[k] for k in params]
        + ["status", "objective"]
        + (["gap"] if stopped else [])
        + ["actuators", "time"]
    )
    body = []
    for r in rows[:max_rows]:
        m = r.metrics
        status = (
            "failed"
            if r.status == "failed"
            else _STATUS.get(m.get("sizing_status"), m.get("sizing_status") or r.status)
        )
        gap = m.get("gap")
        body.append(
            [str(r.index + 1)]
            + ([r.variant or ""] if variants else [])
            + [_param_text(r.params.get(k, "")) for k in params]
            + [
                status,
                format_number(m.get("objective"), 4) if m.get("objective") is not None else "—",
            ]
            + (
                [
                    f"{100 * gap:.2g} %"
                    if isinstance(gap, (int, float)) and gap == gap and abs(gap) != float("inf")
                    else "—"
                ]
                if stopped
                else []
            )
            + [
                num(m.get("total_mass"), "kg") if m.get("total_mass") is not None else "—",
                f"{r.wall_time:.3g} s" if isinstance(r.wall_time, (int, float)) else "—",
            ]
        )
    more = len(rows) - max_rows
    caption = f"the first {max_rows} of {len(rows)} cases" if more > 0 else None
    return table(f"study {name}", cols, body, caption=caption)


def _param_text(value) -> str:
    """A varied value as written: a list of names as "planetary, cycloidal", not Python's."""
    if isinstance(value, (list, tuple)):
        return ", ".join(str(v) for v in value)
    return pretty_unit(str(value))


def _slots(count: int, backend: str) -> str:
    """ "2 local processes", "1 Dask worker thread"."""
    kind = "local process" if backend == "processes" else "Dask worker thread"
    return f"{count} {kind}" + ("" if count == 1 else ("es" if kind.endswith("s") else "s"))
