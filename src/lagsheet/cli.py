"""The ``lagsheet`` command: one thin function per subcommand; heavy imports inside them."""

from __future__ import annotations

from pathlib import Path

import typer

from . import __version__
from .outputs.cautions import SHORT

app = typer.Typer(add_completion=False, no_args_is_help=True, rich_markup_mode=None,
                  help="Size and check thermal insulation for every line of an equipment schedule.")

CAUTION = SHORT


_WITH_HELP = ("For a .csv schedule: the workbook (.xlsx, .xlsm, .ods) whose other sheets (Conditions, "
              "Materials, Settings, Codes, Fittings, Fluids) it uses; without it, the built-in ones.")


_MAP_HELP = ("'Their header=Our header': read a column of yours as one of lagsheet's inputs, e.g. "
             "'Insul. mat.=Insulation' or 'Pipe OD=Outside diameter [in]' (their unit wins if their header "
             "has one). Repeat for more columns.")


def _version(value: bool):
    if value:
        typer.echo(f"lagsheet {__version__}")
        raise typer.Exit()


@app.callback()
def _main(version: bool = typer.Option(False, "--version", callback=_version, is_eager=True,
                                       help="Print the version and exit.")):
    pass


STDOUT = "-"  # `--report -`: the JSON report goes to standard output, what is said for people to stderr


def _to_stdout(report: Path | None) -> bool:
    return report is not None and str(report) == STDOUT


def _report_path(report: Path | None) -> Path | None:
    """The file the JSON report goes to: none when it goes to standard output (``--report -``)."""
    return None if _to_stdout(report) else report


def _echo_report(report: Path | None, data: dict) -> None:
    """With ``--report -``: the JSON report on standard output (after everything else is said)."""
    if _to_stdout(report):
        from .outputs.report import dumps

        typer.echo(dumps(data))


def _print_summary(outcome, out: Path, quiet: bool, err: bool = False) -> None:
    s = outcome.report["summary"]
    cur = outcome.report.get("currency") or ""
    for n in outcome.inputs.notes:
        if n.level in ("error", "warning") or not quiet:
            where = f" ({n.sheet}!{n.cell})" if n.sheet and n.cell else ""
            typer.echo(f"{n.level}: {n.message}{where}", err=True)
    for line in outcome.report["lines"]:  # line errors are printed with --quiet too: it means errors only
        for n in line["notes"]:
            if n["level"] == "error":
                typer.echo(f"error: {line['tag'] or 'row ' + str(line['row'])}: {n['message']} "
                           f"({n['sheet']}!{n['cell']})", err=True)
    if quiet:
        return
    from rich.console import Console
    from rich.table import Table

    table = Table(title="lagsheet fill", show_header=False)
    table.add_column("what")
    table.add_column("value", justify="right")
    table.add_row("lines", f"{s['lines']}: {s['lines'] - s['errors'] - s['warnings']} ok, "
                  f"{s['warnings']} with warnings, {s['errors']} with errors")
    # as in the Summary sheet: losses and gains apart, bare as the sum of magnitudes
    flows = [line["results"]["heat_loss_W"] or 0.0 for line in outcome.report["lines"]]
    bare = sum(abs(line["results"]["bare_heat_loss_W"] or 0.0) for line in outcome.report["lines"])
    covered = s.get("lines_in_totals", {})

    def of(key):  # a total that leaves lines out says how many it adds up
        k = covered.get(key, s["lines"])
        return f" ({k} of {s['lines']} lines)" if k < s["lines"] else ""

    table.add_row("heat loss, insulated", f"{sum(q for q in flows if q > 0) / 1000:,.1f} kW{of('heat_loss_W')}")
    gain = -sum(q for q in flows if q < 0)
    if gain:
        table.add_row("heat gain, insulated", f"{gain / 1000:,.1f} kW{of('heat_loss_W')}")
    table.add_row("heat loss, bare", f"{bare / 1000:,.1f} kW{of('bare_heat_loss_W')}")
    table.add_row("annual cost", f"{s['annual_cost']:,.0f} {cur}{of('annual_cost')}")
    table.add_row("annual saving", f"{s['annual_saving']:,.0f} {cur}{of('annual_saving')}")
    if s.get("condensate_kg_per_s"):
        table.add_row("steam condensate", f"{s['condensate_kg_per_s'] * 3600:,.1f} kg/h")
    table.add_row("written", str(out))
    Console(width=100, stderr=err).print(table)


@app.command(help="Size and evaluate every line and write the filled workbook to OUT.\n\n" + CAUTION)
def fill(
    file: Path = typer.Argument(..., exists=True, dir_okay=False, help="The schedule (.xlsx, .xlsm, .ods or .csv)."),
    output: Path = typer.Option(None, "-o", "--output", dir_okay=False,
                                help="Where to write the filled workbook (a .csv schedule: .csv or .xlsx)."),
    report: Path = typer.Option(None, "--report", dir_okay=False,
                                help="Also write the JSON report here ('-': to standard output)."),
    sheet: str = typer.Option("Lines", "--sheet", help="The sheet holding the lines."),
    in_place: bool = typer.Option(False, "--in-place", help="Overwrite the input (a backup copy is kept)."),
    allow_loss: bool = typer.Option(False, "--allow-loss",
                                    help="Write even if the check of the written file finds input content "
                                         "changed or missing (each loss is listed as a warning). Without it "
                                         "such a run writes nothing and exits 2."),
    ignore_lock: bool = typer.Option(False, "--ignore-lock",
                                     help="Write even if a spreadsheet program's lock file says the output "
                                          "is open (for a stale lock left by a crash)."),
    quiet: bool = typer.Option(False, "--quiet", "-q", help="Print errors only."),
    map_: list[str] = typer.Option([], "--map", help=_MAP_HELP),
    with_: Path = typer.Option(None, "--with", exists=True, dir_okay=False, help=_WITH_HELP),
):
    from .commands.fill import fill as run

    mapping = _map_pairs(map_, "Insulation")
    with _progress(quiet) as stage:
        outcome = _guarded(lambda: run(file, output, sheet=sheet, report_path=_report_path(report),
                                       in_place=in_place, ignore_lock=ignore_lock, allow_loss=allow_loss,
                                       progress=stage, header_map=mapping, companion=with_))
    _print_summary(outcome, file if in_place else output, quiet, err=_to_stdout(report))
    _echo_report(report, outcome.report)
    raise typer.Exit(outcome.exit_code)


class _progress:
    """A progress line on stderr while reading, solving and writing; silent with --quiet or no terminal."""

    def __init__(self, quiet: bool):
        import sys

        self.live = not quiet and sys.stderr.isatty()
        self.status = None

    def __enter__(self):
        if self.live:
            from rich.console import Console

            self.status = Console(stderr=True).status("lagsheet: starting")
            self.status.start()
        return self.update

    def update(self, stage: str) -> None:
        if self.status is not None:
            self.status.update(f"lagsheet: {stage} ...")

    def __exit__(self, *exc):
        if self.status is not None:
            self.status.stop()
        return False


def _map_pairs(items: list[str], example: str) -> dict[str, str]:
    """--map 'Their header=Our header' options as a dict; a malformed one is exit 2 with the form."""
    mapping = {}
    for m in items:
        theirs, sep, ours = m.partition("=")
        if not sep or not theirs.strip() or not ours.strip():
            typer.echo(f"lagsheet: --map {m!r}: write it as 'Their header={example}'", err=True)
            raise typer.Exit(2)
        mapping[theirs.strip()] = ours.strip()
    return mapping


def _guarded(job):
    """Run ``job``; a LagsheetError is one line and exit 2, and so is anything unforeseen (no traceback)."""
    from .errors import LagsheetError

    try:
        return job()
    except LagsheetError as exc:
        typer.echo(f"lagsheet: {exc}", err=True)
        raise typer.Exit(2) from None
    except Exception as exc:  # a bug must not print a traceback at the user
        typer.echo(f"lagsheet: internal error ({type(exc).__name__}: {exc}); files are only ever "
                   "replaced whole, so none is half-written. Please report this with the workbook", err=True)
        raise typer.Exit(2) from None


@app.command(help="Write the bundled demo schedule into DIR and fill it: the main job on an example.")
def demo(
    directory: Path = typer.Argument(Path("lagsheet-demo"), file_okay=False, help="Folder for the demo files."),
    quiet: bool = typer.Option(False, "--quiet", "-q", help="Print errors only."),
):
    from .commands.demo import write_demo
    from .commands.fill import fill as run
    from .errors import WorkbookError

    src = directory / "demo-plant.xlsx"
    out = directory / "demo-plant-filled.xlsx"

    def job():
        try:
            directory.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise WorkbookError(f"{directory}: cannot create the folder ({exc.strerror or exc}); "
                                "nothing was written") from None
        write_demo(src)
        try:
            return run(src, out, report_path=directory / "demo-plant-report.json")
        except WorkbookError as exc:  # say what the demo did write
            raise WorkbookError(f"{exc} (the demo schedule {src} was written)") from None

    outcome = _guarded(job)
    if not quiet:
        typer.echo(f"demo schedule: {src}")
    _print_summary(outcome, out, quiet)
    raise typer.Exit(outcome.exit_code)


@app.command(help="List the built-in insulation materials and finishes with their sources.")
def materials():
    from .workbook.display import show
    from .workbook.library import finishes
    from .workbook.library import materials as mats

    for m in mats().values():
        pts = ", ".join(f"{show(t, 'temperature')}: {k:.4f}" for t, k in
                        zip(m.mean_temperatures, m.conductivities, strict=True))
        typer.echo(f"{m.name}  [{show(m.min_temperature, 'temperature')} to "
                   f"{show(m.max_temperature, 'temperature')}]  k W/(m·K) at mean temperature: {pts}")
        typer.echo(f"    sold: {', '.join(f'{t * 1000:g}' for t in m.thicknesses)} mm; "
                   f"max layer {m.max_layer * 1000:g} mm; source: {m.source}")
        if m.thicknesses_us:
            typer.echo(f"    sold on sheets in inches: {', '.join(f'{t / 0.0254:g}' for t in m.thicknesses_us)} in; "
                       f"max layer {m.max_layer_us / 0.0254:g} in")
    typer.echo("")
    for f in finishes().values():
        typer.echo(f"finish {f.name}: emissivity {f.emissivity:.2f}; source: {f.source}")
        typer.echo(f"    solar absorptance {f.absorptance:.2f}; source: {f.absorptance_source}")


@app.command(help="Write a blank workbook FILE (.xlsx or .ods, by its suffix) with the Lines, Conditions, "
                  "Materials and Settings sheets, units in the headers, dropdowns, instructions and two "
                  "example rows.\n\n" + CAUTION)
def new(
    file: Path = typer.Argument(..., help="The workbook to write: a name ending in .xlsx or .ods."),
    force: bool = typer.Option(False, "--force", help="Replace FILE if it already exists."),
):
    from .commands.template import write_new

    _guarded(lambda: write_new(file, force=force))
    typer.echo(f"written: {file}")


def _refuse_unsafe(file: Path, *targets: tuple[Path | None, str]) -> None:
    """Before any work: each file a command will write must be safe to write (exit 2 with a sentence if not)."""
    from .errors import WorkbookError
    from .io.save import refuse_unsafe, same_file

    given = [(Path(t), what) for t, what in targets if t is not None and not (what == "report" and _to_stdout(t))]

    def job():
        for k, (target, what) in enumerate(given):
            refuse_unsafe(target, inputs=[file], what=what)
            for other, other_what in given[k + 1:]:
                if same_file(target, other):
                    raise WorkbookError(f"{target}: the {what} and the {other_what} would be the same file; "
                                        "choose two names")

    _guarded(job)


def _open_and_specify(file: Path, sheet: str, companion: Path | None = None):
    from .commands.fill import load
    from .design.select import specify

    book, inputs = load(file, sheet, companion=companion)
    return book, inputs, specify(inputs)


@app.command(help="Check every column, unit and cell of FILE and list what is wrong, with the fix. "
                  "Writes nothing unless --annotate OUT (a copy with a comment on every offending cell).")
def check(
    file: Path = typer.Argument(..., exists=True, dir_okay=False, help="The workbook (.xlsx/.xlsm/.ods/.csv)."),
    annotate: Path = typer.Option(None, "--annotate", dir_okay=False, help="Save a commented copy here."),
    report: Path = typer.Option(None, "--report", dir_okay=False,
                                help="Also write the findings as JSON ('-': to standard output)."),
    sheet: str = typer.Option("Lines", "--sheet", help="The sheet holding the lines."),
    quiet: bool = typer.Option(False, "--quiet", "-q", help="Print errors only."),
    map_: list[str] = typer.Option([], "--map", help=_MAP_HELP),
    with_: Path = typer.Option(None, "--with", exists=True, dir_okay=False, help=_WITH_HELP),
):
    from rich.console import Console
    from rich.markup import escape
    from rich.table import Table

    from .commands.check import check as run

    mapping = _map_pairs(map_, "Insulation")
    from .io.save import writing

    _refuse_unsafe(file, (annotate, "annotated copy"), (report, "report"))
    if with_ is not None:  # the companion workbook is an input too
        _refuse_unsafe(with_, (annotate, "annotated copy"), (report, "report"))

    def findings(outcome) -> dict:
        errors = sum(n.level == "error" for n in outcome.notes)
        warnings = sum(n.level == "warning" for n in outcome.notes)
        return {"input": str(file), "notes": [n.as_dict() for n in outcome.notes],
                "columns": outcome.inputs.columns, "errors": errors, "warnings": warnings}

    def job():
        # the annotated copy and the report are both written and verified before either is renamed
        with writing(inputs=[file], deferred=True):
            outcome = run(file, sheet, annotate, mapping, companion=with_)
            if _report_path(report) is not None:
                from .outputs.report import write_json

                write_json(findings(outcome), report, inputs=[p for p in (annotate,) if p is not None])
        return outcome

    outcome = _guarded(job)
    shown = [n for n in outcome.notes if n.level == "error" or (not quiet and n.level == "warning")]
    to_stdout = _to_stdout(report)
    console = Console(width=160, stderr=to_stdout)
    if shown:
        table = Table(title=f"lagsheet check: {file.name}", show_lines=False)
        for col in ("level", "where", "what", "message"):
            table.add_column(col, overflow="fold")
        for n in shown:
            table.add_row(n.level, f"{n.sheet}!{n.cell}" if n.sheet and n.cell else n.sheet, n.code,
                          escape(n.message))  # '[m]' in a message is text, not rich markup
        console.print(table)
    errors = sum(n.level == "error" for n in outcome.notes)
    warnings = sum(n.level == "warning" for n in outcome.notes)
    typer.echo(f"{errors} errors, {warnings} warnings" + (f"; annotated copy: {annotate}" if annotate else "")
               + (f"; report: {report}" if _report_path(report) else ""), err=to_stdout)
    _echo_report(report, findings(outcome))
    raise typer.Exit(outcome.exit_code)


@app.command(help="Print the whole calculation of the line TAG of FILE: inputs, layers, coefficients, "
                  "balance, targets. --plot OUT.png draws heat loss and surface temperature against thickness.")
def explain(
    file: Path = typer.Argument(..., exists=True, dir_okay=False, help="The workbook."),
    tag: str = typer.Argument(..., help="The Tag of the line."),
    plot: Path = typer.Option(None, "--plot", dir_okay=False, help="Also draw the line's curves to this PNG."),
    sheet: str = typer.Option("Lines", "--sheet", help="The sheet holding the lines."),
    with_: Path = typer.Option(None, "--with", exists=True, dir_okay=False, help=_WITH_HELP),
):
    from .commands.explain import explain as words
    from .commands.explain import one_line
    from .commands.fill import load
    from .design.select import specify

    _refuse_unsafe(file, (plot, "plot"))
    if with_ is not None:  # the companion workbook is an input too
        _refuse_unsafe(with_, (plot, "plot"))
    book, inputs = _guarded(lambda: load(file, sheet, companion=with_))
    found = one_line(inputs, tag)  # only the line asked for (and those linked to it) is sized
    if found is None:
        typer.echo(f"lagsheet: no line with Tag {tag!r} in {inputs.lines.sheet}", err=True)
        raise typer.Exit(2)
    inputs, i = found
    res = _guarded(lambda: specify(inputs))
    typer.echo("\n".join(words(inputs, book.sheet(inputs.lines.sheet), res, i)))
    if plot is not None:
        if not (res.lines[i].ok and res.lines[i].materials):
            typer.echo("lagsheet: this line has no computed insulated system to plot", err=True)
            raise typer.Exit(1)
        from .outputs.plot import plot_line

        _guarded(lambda: plot_line(inputs, res, i, plot, never=[file]))
        typer.echo(f"plot: {plot}")
    raise typer.Exit(1 if res.status[i] == "error" else 0)


@app.command(help="Recompute FILE, a schedule someone already filled, and list every result that differs "
                  "beyond tolerance, with the most likely cause. Exit 1 when anything differs.")
def audit(
    file: Path = typer.Argument(..., exists=True, dir_okay=False, help="The filled workbook."),
    map_: list[str] = typer.Option([], "--map", help="'Their header=Thickness': read their column as ours "
                                                    "(Thickness, Surface temperature, Heat loss, Heat loss per length)."),
    surface_k: float = typer.Option(2.0, "--surface-tolerance", help="Surface temperature tolerance [K]."),
    loss_pct: float = typer.Option(5.0, "--loss-tolerance", help="Heat loss tolerance [%]."),
    sheet: str = typer.Option("Lines", "--sheet", help="The sheet holding the lines."),
    report: Path = typer.Option(None, "--report", dir_okay=False,
                                help="Also write the findings as JSON ('-': to standard output)."),
    with_: Path = typer.Option(None, "--with", exists=True, dir_okay=False, help=_WITH_HELP),
):
    from dataclasses import asdict

    from .commands.audit import audit as run

    mapping = _map_pairs(map_, "Thickness")
    _refuse_unsafe(file, (report, "report"))
    if with_ is not None:  # the companion workbook is an input too
        _refuse_unsafe(with_, (report, "report"))
    book, inputs, res = _guarded(lambda: _open_and_specify(file, sheet, with_))
    result = _guarded(lambda: run(inputs, book.sheet(inputs.lines.sheet), res, mapping, surface_k,
                                  loss_pct / 100))
    to_stdout = _to_stdout(report)
    for f in result.findings:
        typer.echo(f"{f.tag or 'row ' + str(f.row)}: {f.message}", err=to_stdout)
    for c in result.columns:
        if not c.unit_from_header:
            typer.echo(f"warning: {c.header!r} has no unit in its header; read as {c.unit_text}", err=True)
    typer.echo(result.summary(), err=to_stdout)
    data = {"input": str(file), "lines_compared": result.lines_compared,
            "columns": [{"header": c.header, "result": c.key, "unit": c.unit_text} for c in result.columns],
            "differences": [asdict(f) for f in result.findings]}
    if _report_path(report) is not None:
        from .outputs.report import write_json

        _guarded(lambda: write_json(data, report, inputs=[file]))
    _echo_report(report, data)
    raise typer.Exit(1 if result.findings else 0)


@app.command(help="Write the calculation package of FILE (a filled workbook, or any schedule: it is sized "
                  "as fill sizes it) to OUT.pdf: the design basis, the Summary and Quantities, the results "
                  "by area and one calculation sheet per chosen line. By default the lines with warnings or "
                  "errors and the first line governed by each target; --tags, --area or --all choose others.\n\n"
                  + CAUTION)
def calcs(
    file: Path = typer.Argument(..., exists=True, dir_okay=False, help="The workbook (.xlsx/.xlsm/.ods)."),
    output: Path = typer.Option(None, "-o", "--output", dir_okay=False, help="Where to write the package (.pdf)."),
    tags: list[str] = typer.Option([], "--tags", help="Tags of the lines to give a sheet, separated by commas "
                                                      "(repeatable)."),
    area: list[str] = typer.Option([], "--area", help="Give a sheet to every line of this Area (repeatable)."),
    every: bool = typer.Option(False, "--all", help="Give every line a sheet."),
    sheet: str = typer.Option("Lines", "--sheet", help="The sheet holding the lines."),
    quiet: bool = typer.Option(False, "--quiet", "-q", help="Print errors only."),
):
    from .commands.calcs import calcs as run

    _refuse_unsafe(file, (output, "calculation package"))
    with _progress(quiet) as stage:
        stage("reading, sizing and writing")
        outcome = _guarded(lambda: run(file, output, sheet=sheet, tags=tags, areas=area, every=every))
    for text in outcome.stale[:5]:
        typer.echo(f"warning: {text} (the package shows the calculation; fill the workbook again)", err=True)
    if len(outcome.stale) > 5:
        typer.echo(f"warning: {len(outcome.stale) - 5} more results of the workbook differ", err=True)
    if not quiet:
        n = len(outcome.chosen)
        typer.echo(f"written: {output} ({outcome.pages} pages; {n} calculation sheet{'' if n == 1 else 's'}: "
                   f"{outcome.scope})")
    raise typer.Exit(outcome.exit_code)


# what --help shows after an option or argument: words a user types, not Python types ('<list[str]>')
_METAVARS = {"output": "OUT", "report": "REPORT.json", "annotate": "OUT", "plot": "PNG", "sheet": "NAME",
             "map_": "'THEIRS=OURS'", "with_": "BOOK", "surface_k": "KELVIN", "loss_pct": "PERCENT"}


def _name_metavars() -> None:
    import inspect

    from typer.models import ArgumentInfo, OptionInfo

    for command in app.registered_commands:
        for name, param in inspect.signature(command.callback).parameters.items():
            info = param.default
            if isinstance(info, ArgumentInfo) and info.metavar is None:
                info.metavar = name.upper()
            elif isinstance(info, OptionInfo) and info.metavar is None and param.annotation not in (bool, "bool"):
                info.metavar = _METAVARS.get(name, name.upper())


def main() -> None:
    _name_metavars()
    app()


if __name__ == "__main__":
    main()
