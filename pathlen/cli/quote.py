"""``pathlen quote ORDER.toml``: an order priced: material nested per run, machine time, lines, charges, total."""

from __future__ import annotations

import math
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import click

from pathlen.cli.profile_files import profiles_or_exit
from pathlen.cli.reading import write_atomic
from pathlen.errors import PathlenError

BROWSERS = ("chromium", "chromium-browser", "google-chrome")


def _quantities(text: str | None) -> tuple[int, ...]:
    if not text:
        return ()
    try:
        values = tuple(sorted({int(x) for x in text.split(",") if x.strip()}))
    except ValueError:
        raise click.BadParameter(f"{text!r} is not a list of whole numbers such as 1,10,50",
                                 param_hint="--quantities") from None
    if not values or values[0] < 1:
        raise click.BadParameter("quantities must be whole numbers of at least 1", param_hint="--quantities")
    return values


@click.command()
@click.argument("order", type=click.Path(dir_okay=False))
@click.option("--shop", "shop_file", type=click.Path(dir_okay=False),
              help="A TOML shop file: [shop] with name, currency, tax_rate_pct, validity_days, minimum_order.")
@click.option("--profiles", "profile_files", multiple=True, type=click.Path(dir_okay=False),
              help="A TOML file of your own profiles (repeatable).")
@click.option("--quantities", help="Price breaks: the unit price of every line at these quantities (1,10,50,100).")
@click.option("--gap", type=float, default=1.0, show_default=True, metavar="MM",
              help="Spacing between nested parts (the profile's kerf is added).")
@click.option("--margin", type=float, default=10.0, show_default=True, metavar="MM",
              help="Distance kept from the sheets' edges.")
@click.option("--time", "time_s", type=float, default=10.0, show_default=True, metavar="S",
              help="Nesting time per material run (price breaks: a quarter of it each).")
@click.option("--seed", type=click.IntRange(min=0), default=None, help="Seed for repeatable layouts.")
@click.option("--units", type=click.Choice(["mm", "in"]), default="mm", show_default=True)
@click.option("--format", "fmt", type=click.Choice(["table", "json", "csv"]), default="table", show_default=True)
@click.option("--output", "-o", type=click.Path(dir_okay=False), help="Write the report to this file.")
@click.option("--document", type=click.Path(dir_okay=False), metavar="FILE.html",
              help="Also write the printable quote document (A4, self-contained, with the nested sheets).")
@click.option("--pdf", type=click.Path(dir_okay=False), metavar="FILE.pdf",
              help="Also print the quote document to PDF (needs Chromium: apt-get install chromium).")
def quote(order: str, shop_file: str | None, profile_files: tuple[str, ...], quantities: str | None, gap: float,
          margin: float, time_s: float, seed: int | None, units: str, fmt: str, output: str | None,
          document: str | None, pdf: str | None) -> None:
    """Price the order ORDER.toml: parts nested on each material's sheets, cut with their profiles, one setup per
    material run, material, minimum charge and tax, each its own line."""
    from pathlen.export import quote as quote_out
    from pathlen.quote.compute import QuoteSettings, quote_order
    from pathlen.quote.order import load_quote_order, load_shop

    for name, value, low in (("--gap", gap, 0.0), ("--time", time_s, 0.0)):
        if not (math.isfinite(value) and value > low):
            raise click.BadParameter("must be a finite number greater than zero", param_hint=name)
    if not (math.isfinite(margin) and margin >= 0):
        raise click.BadParameter("must be a finite number, at least zero", param_hint="--margin")
    breaks = _quantities(quantities)
    profiles = profiles_or_exit(profile_files)
    try:
        shop = load_shop(Path(shop_file)) if shop_file else None
        parsed = load_quote_order(Path(order), shop)
        q = quote_order(parsed, profiles, QuoteSettings(gap, margin, time_s, seed), breaks)
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None
    doc = quote_out.quote_document(q, units)
    if document or pdf:
        page = quote_out.quote_html(doc, _pictures(q))
        if document:
            write_atomic(document, page)
        if pdf:
            _print_pdf(page, pdf)
    if fmt == "table":
        from rich.console import Console

        if output:
            import io

            buf = io.StringIO()
            quote_out.render_table(doc, Console(file=buf, width=120, color_system=None))
            write_atomic(output, buf.getvalue())
        else:
            quote_out.render_table(doc, Console(soft_wrap=False))
    else:
        text = quote_out.render_json(doc) if fmt == "json" else quote_out.render_csv(doc)
        if output:
            write_atomic(output, text)
        else:
            click.echo(text, nl=False)
        for ln in doc["lines"]:
            if not ln["ok"]:
                click.echo(f"error line {ln['line']} {ln['file']}: {ln['error']}", err=True)
        for c in doc["cautions"]:
            click.echo(f"caution: {c}", err=True)
    sys.exit(1 if q.failed else 0)


def _pictures(q: object) -> list[tuple[str, str]]:
    from pathlen.export.nest_picture import nest_svg

    out = []
    for r in q.runs:  # type: ignore[attr-defined]
        if r.nest is not None and r.nest.sheets:
            title = f"{r.material.key}: {r.material.name}, {r.material.thickness_mm:g} mm ({r.profile.name})"
            out.append((title, nest_svg(r.nest, title)))
    return out


def _print_pdf(page: str, pdf: str) -> None:
    """The quote document printed to PDF by headless Chromium (A4 from the page's print stylesheet)."""
    browser = next((shutil.which(b) for b in BROWSERS if shutil.which(b)), None)
    if browser is None:
        raise click.UsageError("--pdf needs Chromium (apt-get install chromium); --document writes the HTML")
    with tempfile.TemporaryDirectory() as tmp:
        html = Path(tmp) / "quote.html"
        html.write_text(page, encoding="utf-8")
        out = Path(tmp) / "quote.pdf"
        run = subprocess.run([browser, "--headless", "--no-sandbox", "--disable-gpu", "--no-pdf-header-footer",
                              f"--print-to-pdf={out}", html.as_uri()], capture_output=True, text=True, timeout=180,
                             check=False)
        if not out.exists():
            raise click.ClickException(f"Chromium could not print the quote: {run.stderr.strip()[-300:]}")
        shutil.copyfile(out, pdf)
