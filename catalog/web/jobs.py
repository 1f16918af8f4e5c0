"""Imports run in the background: one thread per job, progress for the page, the report after.

An import reads and checks its files first (no lock held), then writes in one
transaction through the server's one writer (:class:`~catalog.web.served.ServedStore`);
pages and selections meanwhile read the last committed state.  A job keeps its uploaded
files in its own temporary folder, removed when the job is forgotten (the last
:data:`KEEP` jobs are kept) or the server stops.
"""
from __future__ import annotations

__all__ = ["Job", "Jobs", "import_lines", "KEEP"]

import secrets
import shutil
import threading
import time
from collections import OrderedDict
from dataclasses import dataclass, field
from pathlib import Path

KEEP = 20


@dataclass
class Job:
    id: str
    kind: str                   # import or validate
    folder: Path
    files: list                 # saved paths
    mapping: Path | None = None
    keep_valid: bool = False
    person: str = ""
    stage: str = "queued"       # queued, checking, writing, done, rejected, failed
    done: int = 0
    total: int = 0
    started: float = field(default_factory=time.time)
    finished: float | None = None
    lines: list = field(default_factory=list)      # what the command line would print
    problems: list = field(default_factory=list)   # file:row:field lines
    ok: bool | None = None
    rejects: Path | None = None

    @property
    def running(self) -> bool:
        return self.finished is None

    @property
    def elapsed(self) -> float:
        return (self.finished or time.time()) - self.started

    @property
    def names(self) -> list:
        return [p.name for p in self.files]


def import_lines(report, verb: str) -> list[str]:
    """Per file: records, rows, accepted, converted and its state (as ``motorshelf import`` prints)."""
    out = []
    for f in report.files:
        state = "ok" if not f.problems else ("rejected" if f.accepted == 0 else f"{len(f.problems)} problem(s)")
        out.append(f"{f.source}: {f.record_type or '?'}s, {f.rows} row(s), {f.accepted} {verb}, "
                   f"{f.converted} value(s) converted to SI [{state}]")
    out += [f"warning: {w}" for w in report.warnings]
    return out


class Jobs:
    """The import jobs of one server."""

    def __init__(self, catalog):
        self.catalog = catalog
        self._jobs: OrderedDict = OrderedDict()
        self._lock = threading.Lock()

    def get(self, job_id: str) -> Job | None:
        with self._lock:
            return self._jobs.get(job_id)

    def recent(self) -> list:
        with self._lock:
            return list(reversed(self._jobs.values()))

    def new_folder(self) -> Path:
        import tempfile

        return Path(tempfile.mkdtemp(prefix="motorshelf-upload-"))

    def start(self, kind: str, folder: Path, files: list, mapping=None, keep_valid=False, person="") -> Job:
        job = Job(secrets.token_urlsafe(9), kind, Path(folder), list(files), mapping, keep_valid, person)
        with self._lock:
            self._jobs[job.id] = job
            while len(self._jobs) > KEEP:
                old_id, old = next(iter(self._jobs.items()))
                if old.running:
                    break
                self._jobs.pop(old_id)
                shutil.rmtree(old.folder, ignore_errors=True)
        threading.Thread(target=self._run, args=(job,), name=f"motorshelf-{kind}-{job.id}", daemon=True).start()
        return job

    def close(self) -> None:
        """Forget every finished job and its files (the server stops)."""
        with self._lock:
            for job in self._jobs.values():
                if not job.running:
                    shutil.rmtree(job.folder, ignore_errors=True)
            self._jobs.clear()

    def _progress(self, job: Job):
        def hear(stage, done, total):
            job.stage, job.done, job.total = stage, int(done), int(total)
        return hear

    def _run(self, job: Job) -> None:
        from ..errors import ImportRejected, MotorshelfError

        cat = self.catalog
        try:
            if job.kind == "validate":
                job.stage = "checking"
                report = cat.validate(job.files, mapping=job.mapping)
                job.lines = import_lines(report, "valid")
                job.problems = [str(p) for p in report.problems]
                job.ok = not report.problems
                job.lines.append("all files valid" if job.ok else f"error: {len(report.problems)} problem(s)")
                job.stage = "done" if job.ok else "rejected"
                return
            rejects = job.folder / "rejected-rows.csv" if job.keep_valid else None
            with cat.store.doing(f"import of {', '.join(job.names)}"):
                try:
                    report = cat.import_(job.files, mapping=job.mapping, keep_valid=job.keep_valid,
                                              rejects=rejects, progress=self._progress(job))
                except ImportRejected as exc:
                    rep = getattr(exc, "report", None)
                    job.lines = import_lines(rep, "importable") if rep is not None else []
                    job.problems = [str(p) for p in exc.problems]
                    job.lines.append(f"error: {len(exc.problems)} problem(s); nothing was imported, the catalogue "
                                     "is unchanged")
                    job.ok, job.stage = False, "rejected"
                    return
            job.lines = import_lines(report, "imported")
            job.problems = [str(p) for p in report.problems]
            job.lines.append(f"{report.created} record(s) created, {report.updated} updated, {report.values} "
                             f"value(s) stored, {report.converted} converted to SI"
                             + (f", {report.derived} derived" if report.derived else ""))
            job.lines += [f"flag: {flag}" for flag in report.flags]
            if report.rejects_file:
                job.rejects = Path(report.rejects_file)
                job.lines.append(f"{len(report.problems)} problem(s); the rejected rows are in rejected-rows.csv")
            job.ok = not report.problems
            job.stage = "done"
        except MotorshelfError as exc:
            from .common import problem_lines

            job.problems = [str(p) for p in getattr(exc, "problems", [])]
            job.lines = problem_lines(exc)
            job.ok, job.stage = False, "rejected"
        except Exception as exc:  # noqa: BLE001 - a job thread must record its end, whatever it was
            import logging

            logging.getLogger("motorshelf.web").exception("import job %s failed", job.id, exc_info=exc)
            job.lines = ["error: internal error: the import was not completed; the server's log has the details"]
            job.ok, job.stage = False, "failed"
        finally:
            job.finished = time.time()
