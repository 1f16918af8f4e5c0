"""Which mapping profile each file of an import uses.

A file's own mapping comes first (``FILE=MAPPING`` on the command line, a dict
``{file: mapping}`` in the API), then the first entry of an import manifest whose
pattern matches the file, then the one ``--mapping`` of the call; a file none of
them names is read by its own (canonical) headers.

An import manifest is a small YAML file (``schemas/import_manifest.schema.json``)::

    files:
      - file: "sorvanto_*.csv"          # a name or a glob pattern, relative to the manifest
        mapping: sorvanto.mapping.yaml  # relative to the manifest; omit for canonical headers
      - file: "*.xlsx"
        mapping: gearheads.mapping.yaml

Other top-level keys and an entry's ``description`` and ``record_type`` are notes
for people (``sample_catalog/manifest.yaml`` is such a manifest).
"""
from __future__ import annotations

__all__ = ["ImportManifest", "load_manifest", "split_file_argument", "mappings_for"]

import fnmatch
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import InputError, Problem


@dataclass(frozen=True)
class ImportManifest:
    """Entries ``(pattern, mapping path or None, entry number)`` in file order."""

    source: str
    folder: Path
    entries: tuple = field(default_factory=tuple)

    def mapping_of(self, path) -> tuple[str | None, bool]:
        """``(mapping path or None, matched?)`` of the first entry matching ``path``."""
        p = Path(path)
        names = {p.name, p.as_posix()}
        try:
            names.add(p.resolve().relative_to(self.folder.resolve()).as_posix())
        except ValueError:
            pass
        for pattern, mapping, _ in self.entries:
            if any(fnmatch.fnmatchcase(n, pattern) for n in names):
                return mapping, True
        return None, False


def _schema() -> dict:
    import json

    from ..fields import schema_dir

    return json.loads((schema_dir() / "import_manifest.schema.json").read_text(encoding="utf-8"))


def load_manifest(path) -> ImportManifest:
    """Read and check an import manifest; every problem is one :class:`Problem` (file, entry, key)."""
    import jsonschema
    import yaml

    from .readers import yaml_problem
    from .yamlsafe import load_profile

    path = Path(path)
    source = str(path)
    if not path.is_file():
        msg = "no such import manifest, expected a YAML file with a list of files and their mappings"
        raise InputError(f"{source}: {msg}", [Problem(source, None, None, msg)])
    try:
        doc = load_profile(path.read_text(encoding="utf-8-sig"))
    except UnicodeDecodeError:
        msg = "not UTF-8 text, expected a YAML import manifest saved as UTF-8"
        raise InputError(f"{source}: {msg}", [Problem(source, None, None, msg)]) from None
    except (yaml.YAMLError, RecursionError) as exc:
        problem, line = yaml_problem(exc) if isinstance(exc, yaml.YAMLError) else ("nested too deeply", None)
        msg = f"not a valid YAML import manifest ({problem})"
        raise InputError(f"{source}: {msg}", [Problem(source, line, None, msg)]) from None
    validator = jsonschema.Draft202012Validator(_schema())
    problems = [Problem(source, None, "/".join(str(p) for p in err.absolute_path) or "(top)", err.message)
                for err in sorted(validator.iter_errors(doc), key=lambda e: list(e.absolute_path))]
    if problems:
        raise InputError(f"{source}: invalid import manifest", problems)
    folder = path.parent
    entries = []
    for k, entry in enumerate(doc["files"]):
        mapping = entry.get("mapping")
        if mapping is not None:
            mp = Path(mapping)
            mapping = str(mp if mp.is_absolute() else folder / mp)
            if not Path(mapping).is_file():
                problems.append(Problem(source, None, f"files/{k}/mapping",
                                        f"mapping profile {entry['mapping']!r} not found beside the manifest "
                                        f"(looked for {mapping})"))
        entries.append((str(entry["file"]), mapping, k))
    if problems:
        raise InputError(f"{source}: invalid import manifest", problems)
    return ImportManifest(source, folder, tuple(entries))


def split_file_argument(arg: str) -> tuple[str, str | None]:
    """``'FILE=MAPPING'`` → ``('FILE', 'MAPPING')``; a plain file (even one named with ``=``) → ``(arg, None)``."""
    text = str(arg)
    if "=" not in text or Path(text).exists():
        return text, None
    file, _, mapping = text.rpartition("=")
    if not file or not mapping:
        return text, None
    return file, mapping


def mappings_for(paths, mapping=None, manifest=None) -> list[tuple[str, str | None, str]]:
    """``(path, mapping or None, why)`` per file; ``why`` says where the mapping came from.

    ``mapping``: None, one profile for every file, or a dict ``{file: profile}``
    (a file's own); ``manifest``: an :class:`ImportManifest` or a path to one.
    """
    if manifest is not None and not isinstance(manifest, ImportManifest):
        manifest = load_manifest(manifest)
    own = dict(mapping) if isinstance(mapping, dict) else {}
    common = None if isinstance(mapping, dict) else mapping
    out = []
    for p in paths:
        key = str(p)
        if key in own and own[key] is not None:
            out.append((key, str(own[key]), "given with the file"))
            continue
        if manifest is not None:
            chosen, matched = manifest.mapping_of(p)
            if matched:
                out.append((key, chosen, f"manifest {manifest.source}"))
                continue
        if common is not None:
            out.append((key, str(common), "--mapping"))
        else:
            out.append((key, None, ""))
    return out
