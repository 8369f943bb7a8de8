"""Output files of a run, written so that nothing is lost or half-written.

Every output (JSON, CSV, the HTML report, its Markdown twin and plots) is
first rendered in memory, then written to a temporary file beside its
target, and only when all of them are complete are they moved into place
(``os.replace``, atomic on one file system).  A failure on any of them
removes the temporary files and leaves every existing file as it was.

An existing file is not overwritten unless ``force`` is given (``eosfill run
--force``); the scenario file itself is never overwritten, even with
``force``.
"""
from __future__ import annotations

import os
import tempfile
from pathlib import Path

from eosfill.errors import InputError

OUTPUT_KEYS = ("json", "csv", "report")


def _same_file(a: Path, b: Path | None) -> bool:
    if b is None:
        return False
    try:
        return a.resolve() == Path(b).resolve() or (a.exists() and os.path.samefile(a, b))
    except OSError:
        return False


def report_companions(path: Path) -> Path:
    """The Markdown twin of an HTML report: same name, ``.md``."""
    md = path.with_suffix(".md")
    return md if md != path else path.with_name(path.name + ".md")


def check_target(path, key, force=False, scenario_path=None):
    """Refuse an output ``path`` (for the option or key ``key``) that would
    overwrite the scenario file, an existing file without ``force``, a folder,
    or sit in a folder that does not exist."""
    path = Path(path)
    if _same_file(path, scenario_path):
        raise InputError(key, str(path), message=f"{key} {path}: is the scenario file itself; "
                         "an output never overwrites it")
    if path.is_dir():
        raise InputError(key, str(path), message=f"{key} {path}: is a folder; give a file name")
    if not path.parent.resolve().is_dir():
        raise InputError(key, str(path), message=f"{key} {path}: the folder {path.parent} does not exist")
    if path.exists() and not force:
        raise InputError(key, str(path), message=f"{key} {path}: the file exists; "
                         "give --force to overwrite it (or another name)")


def check_outputs(scenario, force=False):
    """Check every output target of ``scenario.output`` before anything is computed."""
    out = scenario.output
    for key in OUTPUT_KEYS:
        p = getattr(out, key)
        if p is None:
            continue
        check_target(p, f"--{key}", force, scenario.path)
        if key == "report":
            check_target(report_companions(Path(p)), "--report (its Markdown twin)", force, scenario.path)


def commit(files, force=False, scenario_path=None) -> list:
    """Write ``files`` ({path: bytes}) all or nothing; returns the paths written.

    Each is written to a temporary file in its target's folder; when all are
    written they are moved into place.  On any failure the temporary files are
    removed and the error (InputError for a path that cannot be used) raised."""
    staged = []
    path = None
    try:
        for path, data in files.items():
            path = Path(path)
            check_target(path, str(path), force, scenario_path)
            fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".part")
            staged.append((tmp, path))
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
    except OSError as exc:
        _discard(staged)
        raise InputError(str(path), None, message=f"cannot write {path}: {exc.strerror or exc}; "
                         "nothing was written") from None
    except BaseException:
        _discard(staged)
        raise
    for tmp, path in staged:
        os.replace(tmp, path)
    return [p for _, p in staged]


def _discard(staged):
    for tmp, _ in staged:
        try:
            os.unlink(tmp)
        except OSError:
            pass
