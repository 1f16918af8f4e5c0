"""The import pages: upload supplier files (and a mapping profile), check them or import them in
the background, follow the progress, read the problems as ``file:row:field`` lines."""
from __future__ import annotations

__all__ = ["routes", "save_upload"]

import re
import shutil
from pathlib import Path

from starlette.responses import RedirectResponse, Response
from starlette.routing import Route

from ..errors import InputError, NotFound, Problem
from .common import person_of, read_form, render

_SUFFIXES = (".csv", ".xlsx", ".json", ".yaml", ".yml")
#: The largest upload of one import (every file and the mapping): the readers' limit per file
#: is 24 MiB (``catalog.ingest.readers.MAX_FILE_BYTES``).
MAX_UPLOAD_BYTES = 128 * 1024 * 1024


def _safe_file_name(name: str) -> str:
    base = Path(str(name).replace("\\", "/")).name
    base = re.sub(r"[^\w.+-]+", "_", base, flags=re.UNICODE).strip("._")[:120]
    return base or "upload"


async def save_upload(upload, folder: Path, limit: int) -> Path:
    """Copy ``upload`` into ``folder`` under its own (cleaned) name, at most ``limit`` + 1 bytes
    (the reader then refuses a file over its limit with its usual line)."""
    name = _safe_file_name(upload.filename or "upload")
    path = folder / name
    stem, suffix, n = path.stem, path.suffix, 1
    while path.exists():
        n += 1
        path = folder / f"{stem}-{n}{suffix}"
    written = 0
    with path.open("wb") as fh:
        while written <= limit:
            chunk = await upload.read(min(1 << 20, limit + 1 - written))
            if not chunk:
                break
            fh.write(chunk)
            written += len(chunk)
    return path


async def import_form(request):
    return render(request, "import.html", {"jobs": request.app.state.jobs.recent(), "lines": []})


async def start_import(request):
    from ..ingest.readers import MAX_FILE_BYTES

    size = request.headers.get("content-length", "")
    if size.isdigit() and int(size) > MAX_UPLOAD_BYTES:
        from .common import problem_lines

        exc = InputError("upload too large", [Problem("files", None, None, f"{int(size) / 2**20:.0f} MiB in one "
                                                      f"upload, expected at most {MAX_UPLOAD_BYTES // 2**20} MiB")])
        return render(request, "import.html", {"jobs": request.app.state.jobs.recent(),
                                               "lines": problem_lines(exc)}, status_code=413)
    form = await read_form(request)
    jobs = request.app.state.jobs
    kind = "validate" if form.get("action") == "validate" else "import"
    uploads = [u for u in form.getlist("files") if hasattr(u, "read") and getattr(u, "filename", "")]
    mapping = form.get("mapping")
    mapping = mapping if hasattr(mapping, "read") and getattr(mapping, "filename", "") else None
    problems = []
    if not uploads:
        problems.append(Problem("files", None, None, "missing, expected one or more supplier files "
                                                     "(CSV, XLSX, JSON, YAML)"))
    for u in uploads:
        if Path(u.filename).suffix.lower() not in _SUFFIXES:
            problems.append(Problem(_safe_file_name(u.filename), None, None,
                                    f"extension {Path(u.filename).suffix or '(none)'!r}, expected one of "
                                    f"{', '.join(_SUFFIXES)}"))
    if mapping is not None and Path(mapping.filename).suffix.lower() not in (".yaml", ".yml"):
        problems.append(Problem(_safe_file_name(mapping.filename), None, None,
                                "a mapping profile is a YAML file (.yaml or .yml)"))
    if problems:
        from .common import problem_lines

        exc = InputError(f"{len(problems)} problem(s)", problems)
        return render(request, "import.html", {"jobs": jobs.recent(), "lines": problem_lines(exc)},
                      status_code=422)
    folder = jobs.new_folder()
    try:
        files = [await save_upload(u, folder, MAX_FILE_BYTES) for u in uploads]
        mapping_path = None
        if mapping is not None:
            sub = folder / "mapping"
            sub.mkdir()
            mapping_path = await save_upload(mapping, sub, MAX_FILE_BYTES)
    except OSError:
        shutil.rmtree(folder, ignore_errors=True)
        raise
    job = jobs.start(kind, folder, files, mapping_path, keep_valid=bool(form.get("keep_valid")),
                     person=person_of(request, form.get("person")))
    return RedirectResponse(f"/import/jobs/{job.id}", status_code=303)


def _job(request):
    job = request.app.state.jobs.get(request.path_params["job"])
    if job is None:
        raise NotFound("no such import (the server keeps the latest 20 while it runs)")
    return job


def _shown(job, lines):
    """Lines naming the uploaded files by their names, not the server's folder."""
    prefixes = [str(job.folder / "mapping") + "/", str(job.folder) + "/"]
    out = []
    for line in lines:
        for p in prefixes:
            line = line.replace(p, "")
        out.append(line)
    return out


def _context(job):
    return {"job": job, "lines": _shown(job, job.lines), "problems": _shown(job, job.problems)}


async def job_page(request):
    return render(request, "job.html", _context(_job(request)))


async def job_status(request):
    return render(request, "_job_status.html", _context(_job(request)))


async def job_rejects(request):
    job = _job(request)
    if job.rejects is None or not job.rejects.exists():
        raise NotFound("this import wrote no rejected rows (only an import with 'keep the valid rows' does)")
    return Response(job.rejects.read_bytes(), media_type="text/csv; charset=utf-8",
                    headers={"content-disposition": 'attachment; filename="rejected-rows.csv"'})


routes = [
    Route("/import", import_form, methods=["GET"]),
    Route("/import", start_import, methods=["POST"]),
    Route("/import/jobs/{job}", job_page, methods=["GET"]),
    Route("/import/jobs/{job}/status", job_status, methods=["GET"]),
    Route("/import/jobs/{job}/rejected-rows.csv", job_rejects, methods=["GET"]),
]
