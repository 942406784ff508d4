"""A set of records: ``calcdoc build FILE FILE... | FOLDER [-j N] [--changed]``.

Every project is an independent :class:`~calcdoc.commands.records.RecordJob`
built by :func:`~calcdoc.commands.records.build_record` in a pool of
processes (``-j N``, default the number of CPUs). A folder stands for its
``*.toml`` files. One failing record does not stop the others; the exit
status is the worst of the records' (0 built or unchanged, 2 not built).
On a terminal a progress line shows the records done, those being built
and the time elapsed; otherwise each record gets a plain line as it
finishes. A summary lists every record, and ``register.pdf`` and
``register.csv`` are written into the folder given (the current folder for
a list of files).
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable, Sequence
from pathlib import Path

from calcdoc.commands.records import RecordJob, RecordOutcome, build_record, failed
from calcdoc.commands.register import register_csv, register_pdf, relative, summary_line
from calcdoc.errors import CalcdocError
from calcdoc.fileio import check_output, stops_raise, write_atomic

REGISTER_NAMES = ("register.pdf", "register.csv")


def cpu_count() -> int:
    """CPUs this process may run on."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - not Linux
        return os.cpu_count() or 1


def collect(paths: Sequence[str]) -> tuple[list[str], Path]:
    """The project files of a set and the register's folder.

    One folder stands for its ``*.toml`` files (sorted by name), its register
    goes into it; a list of files keeps its order (repeats dropped), its
    register goes into the current folder.

    Raises
    ------
    CalcdocError
        A folder among other paths, or a folder without project files.
    """
    if len(paths) == 1 and Path(paths[0]).is_dir():
        folder = Path(paths[0])
        found = sorted(p.name for p in folder.iterdir() if p.suffix == ".toml" and p.is_file())
        if not found:
            raise CalcdocError(f"{folder}: no project files (*.toml) in this folder")
        return [str(folder / name) for name in found], folder
    folders = [p for p in paths if Path(p).is_dir()]
    if folders:
        raise CalcdocError(f"{folders[0]}: a folder; give one folder, or a list of project files")
    seen: set[str] = set()
    out = []
    for p in paths:
        key = os.path.realpath(p)
        if key not in seen:
            seen.add(key)
            out.append(p)
    return out, Path(".")


def plan(
    projects: Sequence[str], reserved: Sequence[Path], changed: bool
) -> dict[str, RecordOutcome]:
    """Outcomes known before any building: records that share a package, unchanged records.

    Every project is read (quickly; no solving) to find its package's
    default name. Two records whose packages would have the same name (same
    document number and revision), or a package named like the register,
    are not built. With ``changed``, a record whose package embeds the same
    input and calcdoc version is unchanged. Projects that cannot be read are
    left to the build, which reports them.
    """
    import calcdoc
    from calcdoc.commands.records import unchanged_outcome
    from calcdoc.report.package import default_output

    owners: dict[str, list[str]] = {os.path.realpath(r): [f"the register {r}"] for r in reserved}
    loaded = {}
    for p in projects:
        try:
            project = calcdoc.load(p)
        except CalcdocError:
            continue
        out = default_output(project, Path(p))
        loaded[p] = (project, out)
        owners.setdefault(os.path.realpath(out), []).append(p)
    known: dict[str, RecordOutcome] = {}
    for out, who in owners.items():
        if len(who) > 1:
            for p in who:
                if p in loaded:
                    others = ", ".join(w for w in who if w != p)
                    known[p] = failed(
                        p,
                        f"{p}: not built: its package {out} would also be that "
                        f"of {others} (give each record its own document number "
                        "or revision)",
                    )
    if changed:
        for p, (project, out) in loaded.items():
            if p not in known:
                same = unchanged_outcome(project, out, [])
                if same is not None:
                    known[p] = same
    return known


def run_batch(
    paths: Sequence[str], *, jobs: int | None, changed: bool, strict: bool, term, quiet: bool
) -> int:
    """Build every record of the set, write the register; returns the worst status."""
    projects, folder = collect(paths)
    reserved = [folder / name for name in REGISTER_NAMES]
    for r in reserved:
        check_output(r, projects)
    known = plan(projects, reserved, changed)
    todo = [
        RecordJob(p, strict=strict, changed=changed, inputs=tuple(q for q in projects if q != p))
        for p in projects
        if p not in known
    ]
    live = not quiet and bool(getattr(term.err, "isatty", lambda: False)())
    display = _Display(term, len(projects), live=live, plain=not quiet and not live)
    outcomes = dict(known)
    for p, outcome in known.items():
        display.finished(p, outcome)
    workers = max(1, min(jobs or cpu_count(), len(todo)))
    with stops_raise():
        for outcome in _execute(todo, workers, display.started):
            outcomes[outcome.project] = outcome
            display.finished(outcome.project, outcome)
    display.close()
    ordered = [outcomes[p] for p in projects]
    name = (
        (folder.resolve().name or str(folder.resolve())) if folder != Path(".") else Path.cwd().name
    )
    write_atomic(reserved[1], register_csv(ordered, folder))
    write_atomic(reserved[0], register_pdf(ordered, folder, name))
    _summary(term, ordered, folder, reserved)
    return max(o.status for o in ordered)


# ---------------------------------------------------------------- running the jobs


def _execute(todo: Sequence[RecordJob], workers: int, started: Callable[[str], None]):
    """Yield each job's outcome as it finishes (in this process when ``workers`` is 1)."""
    if workers == 1:
        for job in todo:
            started(job.project)
            yield build_record(job)
        return
    import multiprocessing
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait

    ctx = multiprocessing.get_context("spawn")  # a fresh interpreter: no threads inherited
    starts = ctx.Queue()
    pool = ProcessPoolExecutor(
        workers, mp_context=ctx, initializer=_worker_start, initargs=(starts,)
    )
    try:
        futures = {pool.submit(_worker_build, job): job for job in todo}
        pending = set(futures)
        while pending:
            done, pending = wait(pending, timeout=0.25, return_when=FIRST_COMPLETED)
            _drain(starts, started)
            for f in done:
                job = futures[f]
                try:
                    yield f.result()
                except Exception as exc:  # the worker process itself ended (killed, out of memory)
                    yield failed(
                        job.project,
                        f"{job.project}: the process building it stopped "
                        f"unexpectedly ({type(exc).__name__})",
                    )
    except BaseException:
        for child in multiprocessing.active_children():
            child.terminate()  # a worker writing a package removes its partial file first
        pool.shutdown(wait=True, cancel_futures=True)
        raise
    pool.shutdown(wait=True)


def _drain(queue, started: Callable[[str], None]) -> None:
    import queue as queue_module

    while True:
        try:
            started(queue.get_nowait())
        except queue_module.Empty:
            return


_STARTS = None


def _worker_start(starts) -> None:
    """In each worker: report starts to the parent; Ctrl-C is the parent's to handle."""
    import signal

    global _STARTS
    _STARTS = starts
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _worker_build(job: RecordJob) -> RecordOutcome:
    if _STARTS is not None:
        _STARTS.put(job.project)
    return build_record(job)


# ---------------------------------------------------------------- terminal


class _Display:
    """Progress on a terminal (records done, being built, elapsed), or a line per record."""

    def __init__(self, term, total: int, *, live: bool, plain: bool) -> None:
        self.term, self.total, self.live, self.plain = term, total, live, plain
        self.done = 0
        self.building: list[str] = []
        self.start = time.monotonic()

    def _elapsed(self) -> str:
        s = int(time.monotonic() - self.start)
        return f"{s // 60}:{s % 60:02d}"

    def _show(self) -> None:
        if self.live:
            import shutil

            now = ", ".join(Path(p).name for p in self.building)
            text = f"{self.done}/{self.total} records, {self._elapsed()} elapsed" + (
                f"; building {now}" if now else ""
            )
            width = shutil.get_terminal_size().columns - 1  # one line, never wrapped
            self.term.progress(text if len(text) <= width else text[: width - 1] + "…")

    def started(self, project: str) -> None:
        self.building.append(project)
        self._show()

    def finished(self, project: str, o: RecordOutcome) -> None:
        self.done += 1
        if project in self.building:
            self.building.remove(project)
        if self.live:
            self.term.progress_done()
        for w in o.warnings:
            self.term.warning(w)
        if o.status:
            self.term.error(o.message)
        if self.plain:
            what = {"built": f"built {o.package}", "unchanged": f"unchanged {o.package}"}
            self.term.line(
                f"[{self.done}/{self.total}] {project}: "
                f"{what.get(o.action, 'not built')} ({self._elapsed()})"
            )
        self._show()

    def close(self) -> None:
        if self.live:
            self.term.progress_done()


def _summary(term, outcomes: Sequence[RecordOutcome], folder: Path, reserved) -> None:
    rows = []
    for i, o in enumerate(outcomes, 1):
        built = o.action != "not built"
        worst = f"{100 * o.worst_utilisation:.1f} %" if o.worst_utilisation is not None else ""
        checks = f"{o.checks_run} run, {o.checks_failing} failing" if built else ""
        rows.append(
            (
                str(i),
                relative(o.project, folder) if folder != Path(".") else o.project,
                o.number,
                o.revision,
                o.action,
                checks,
                worst,
            )
        )
    term.line()
    term.table(
        ["No.", "project", "document", "rev.", "this run", "checks", "worst"], rows, align="rllllll"
    )
    term.line(summary_line(outcomes))
    term.line(f"register: {reserved[0]}, {reserved[1]}")
