"""``pathlen watch INBOX --out OUTBOX``: the folder service; ``--status OUTBOX``: what its ledger says."""

from __future__ import annotations

from pathlib import Path

import click

from pathlen.batch import DEFAULT_MAX_MEMORY_MB, DEFAULT_TIMEOUT_S, Limits
from pathlen.errors import PathlenError


@click.command()
@click.argument("inbox", required=False, type=click.Path(file_okay=False, path_type=Path))
@click.option("--out", "outbox", type=click.Path(file_okay=False, path_type=Path), help="The outbox folder.")
@click.option("--task", type=click.Choice(["measure", "cut", "seam", "bead"]), default="measure", show_default=True)
@click.option("--profile", help="Process profile (--task cut).")
@click.option("--profiles", "profile_files", multiple=True, type=click.Path(dir_okay=False),
              help="A TOML file of your own profiles (--task cut).")
@click.option("--bead", "bead_spec", metavar="SPEC", help="Bead section (--task bead), e.g. rect:12x6.")
@click.option("--plan", "plan_file", type=click.Path(dir_okay=False), help="A seam or bead plan (--task seam, bead).")
@click.option("--quantity", "-q", type=click.IntRange(min=1), help="Parts (cut) or garments (seam) per drawing.")
@click.option("--layers", help="Layers to cut (--task cut), comma-separated.")
@click.option("--engrave", help="Layers engraved (--task cut), comma-separated.")
@click.option("--ignore", help="Layers left out (--task cut), comma-separated.")
@click.option("--dedupe", is_flag=True, default=None, help="Cut segments drawn twice once (--task cut).")
@click.option("--recover", is_flag=True, default=None, help="Measure what can be read of damaged DXF files.")
@click.option("--poll", type=click.FloatRange(min=0.05), default=2.0, show_default=True, metavar="S",
              help="Seconds between scans of the inbox (the safety net under change events).")
@click.option("--settle", type=click.FloatRange(min=0), default=2.0, show_default=True, metavar="S",
              help="Seconds a file's size and time must stay unchanged before it is taken.")
@click.option("--jobs", "-j", type=click.IntRange(min=0), default=1, show_default=True, help="Worker processes.")
@click.option("--timeout", type=click.FloatRange(min=0, min_open=True), default=DEFAULT_TIMEOUT_S, show_default=True)
@click.option("--max-memory", type=click.IntRange(min=64), default=DEFAULT_MAX_MEMORY_MB, show_default=True,
              metavar="MB")
@click.option("--state", type=click.Path(file_okay=False, path_type=Path),
              help="Folder of the ledger (default OUTBOX/.pathlen; keep it on a local disk).")
@click.option("--keep", is_flag=True, help="Leave originals in the inbox (the ledger remembers them).")
@click.option("--once", is_flag=True, help="Process what is there, then exit (for cron and tests).")
@click.option("--no-events", is_flag=True, help="Poll only (network shares deliver no change events).")
@click.option("--log-json", is_flag=True, help="Log lines as JSON objects.")
@click.option("--config", "service_file", type=click.Path(dir_okay=False),
              help="A TOML service file: [folder.\"NAME\"] tables giving the task (and profile or bead) for the "
                   "inbox's sub-folder NAME.")
@click.option("--csv", "write_csv", is_flag=True, help="Write each result as CSV too.")
@click.option("--scheduler", metavar="tcp://HOST:8786", default=None,
              help="Hand the jobs to a Dask cluster (pip install 'pathlen[cluster]'); its workers must see the "
                   "inbox at the same path.")
@click.option("--status", "status_of", type=click.Path(file_okay=False, path_type=Path), metavar="OUTBOX",
              help="Print the ledger's counts and last failures for OUTBOX, then exit.")
@click.option("--json", "status_json", is_flag=True, help="With --status: as a JSON object.")
def watch(inbox: Path | None, outbox: Path | None, task: str, profile: str | None, profile_files: tuple[str, ...],
          bead_spec: str | None, plan_file: str | None, quantity: int | None, layers: str | None,
          engrave: str | None, ignore: str | None, dedupe: bool | None, recover: bool | None, poll: float,
          settle: float, jobs: int, timeout: float, max_memory: int,
          state: Path | None, keep: bool, once: bool, no_events: bool, log_json: bool, service_file: str | None,
          write_csv: bool, status_of: Path | None, status_json: bool, scheduler: str | None) -> None:
    """Measure or estimate every drawing dropped into INBOX, results into OUTBOX, never losing or repeating a job."""
    from pathlen.watch.service import Service, WatchConfig, status
    from pathlen.watch.tasks import build_task, load_service_file

    if status_of is not None:
        try:
            click.echo(status(status_of, state, status_json))
        except PathlenError as exc:
            raise click.UsageError(str(exc)) from None
        return
    if inbox is None or outbox is None:
        raise click.UsageError("give INBOX and --out OUTBOX (or --status OUTBOX)")
    options = {"profile": profile, "bead": bead_spec, "plan": str(Path(plan_file).resolve()) if plan_file else None,
               "quantity": quantity, "layers": layers, "engrave": engrave, "ignore": ignore, "dedupe": dedupe,
               "recover": recover}
    try:
        chosen = build_task(task, options, profile_files, f"watch --task {task}")
        tasks = load_service_file(Path(service_file), chosen, profile_files) if service_file else {"": chosen}
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None
    state_dir = state or outbox / ".pathlen"
    if _network_fs(state_dir.parent if not state_dir.exists() else state_dir):
        click.echo("warning: the ledger folder is on a network file system; SQLite wants a local disk", err=True)
    cfg = WatchConfig(inbox, outbox, state_dir, tasks, poll, settle, jobs, Limits(timeout, max_memory), keep, once,
                      not no_events, log_json, write_csv, scheduler)
    try:
        service = Service(cfg)
    except (ValueError, PathlenError) as exc:
        raise click.UsageError(str(exc)) from None
    raise SystemExit(service.run())


def _network_fs(path: Path) -> bool:
    """Whether ``path`` lies on a network file system (Linux /proc/mounts; False where unknown)."""
    try:
        target = str(path.resolve())
        best, kind = "", ""
        with open("/proc/mounts", encoding="utf-8") as fh:
            for line in fh:
                parts = line.split()
                if len(parts) > 2 and target.startswith(parts[1]) and len(parts[1]) > len(best):
                    best, kind = parts[1], parts[2]
        return kind in ("nfs", "nfs4", "cifs", "smb3", "smbfs", "sshfs", "fuse.sshfs", "9p")
    except OSError:
        return False
