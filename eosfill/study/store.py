"""The result store of a study: rows written in chunks, safe against a kill.

Layout, for an output file ``results.parquet``::

    results.parquet.parts/
        study.json                       what study the parts belong to (fingerprint, case count)
        part-00000012-<random>.parquet   one chunk of rows (any case ids, each once)

Every file is written under a temporary name in the same folder and moved
into place with :func:`os.replace` (atomic on POSIX and Windows), so a kill
at any moment leaves whole chunks or none: a half-written chunk keeps its
temporary name and is ignored (and removed) on resume.  On resume the
case ids of the chunks present are read and only the missing cases run.
The final file is assembled from the chunks, in case order, written the
same way, and the parts folder is then removed.

Chunk files have the output's format: Parquet (pyarrow) for ``.parquet``,
CSV for ``.csv``.
"""
from __future__ import annotations

import json
import os
import uuid
from pathlib import Path

from eosfill.errors import EosfillError, InputError

FORMATS = (".parquet", ".csv")


def _require_pandas(fmt):
    try:
        import pandas  # noqa: F401

        if fmt == ".parquet":
            import pyarrow  # noqa: F401
    except ImportError as exc:
        raise InputError("output", fmt, message=f"writing {fmt} study results needs pandas"
                         f"{' and pyarrow' if fmt == '.parquet' else ''} ({exc}); install them with "
                         "\"pip install eosfill[study]\"") from None


def write_table(df, path):
    """Write a DataFrame to ``path`` (by its extension) atomically."""
    path = Path(path)
    tmp = path.with_name(f".tmp-{uuid.uuid4().hex}-{path.name}")
    try:
        if path.suffix == ".parquet":
            df.to_parquet(tmp, index=False)
        else:
            df.to_csv(tmp, index=False)
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()


def read_table(path):
    import pandas as pd

    path = Path(path)
    return pd.read_parquet(path) if path.suffix == ".parquet" else pd.read_csv(path, keep_default_na=True)


class ResultStore:
    """Chunks of rows beside ``output`` (see the module docstring).

    Parameters
    ----------
    output : str or Path
        The final file (``.parquet`` or ``.csv``).
    fingerprint : str
        Identifies the study (cases and what runs them); a resume with
        another fingerprint is refused.
    n_cases : int
    resume : bool
        Continue from the chunks present; without it, an unfinished
        study's parts folder is an error (nothing is overwritten).
    """

    def __init__(self, output, fingerprint: str, n_cases: int, resume: bool = False):
        self.output = Path(output)
        self.format = self.output.suffix.lower()
        if self.format not in FORMATS:
            raise InputError("output", str(output), "a file name ending in .parquet or .csv")
        if not self.output.parent.resolve().is_dir():
            raise InputError("output", str(output), message=f"{output}: the folder {self.output.parent} does not exist")
        _require_pandas(self.format)
        self.parts = self.output.with_name(self.output.name + ".parts")
        self.fingerprint = fingerprint
        self.n_cases = int(n_cases)
        manifest = self.parts / "study.json"
        if self.parts.exists():
            if not resume:
                raise InputError("resume", str(self.parts), message=f"{self.parts} holds the chunks of an "
                                 "unfinished study: continue it with --resume (resume=True), or delete the folder")
            try:
                info = json.loads(manifest.read_text(encoding="utf-8"))
            except (OSError, ValueError):
                info = {}
            if info.get("fingerprint") != fingerprint or info.get("n_cases") != self.n_cases:
                raise InputError("resume", str(self.parts), message=f"{self.parts} belongs to another study "
                                 f"({info.get('n_cases')} cases, fingerprint {info.get('fingerprint')!r}; this "
                                 f"one: {self.n_cases} cases, {fingerprint!r}); delete it to start afresh")
            for tmp in self.parts.glob(".tmp-*"):  # half-written by a killed run
                tmp.unlink()
        else:
            self.parts.mkdir()
            text = json.dumps({"fingerprint": fingerprint, "n_cases": self.n_cases}, indent=1)
            tmp = self.parts / ".tmp-study.json"
            tmp.write_text(text, encoding="utf-8")
            os.replace(tmp, manifest)

    def chunk_files(self):
        return sorted(self.parts.glob(f"part-*{self.format}"))

    def done_ids(self) -> set:
        """Case ids already written (a set)."""
        done = set()
        for f in self.chunk_files():
            ids = read_table(f)["case"].tolist()
            done.update(int(i) for i in ids)
        return done

    def write_chunk(self, rows):
        """Write one chunk of row dicts (each with its ``case`` id)."""
        import pandas as pd

        if not rows:
            return None
        first = min(int(r["case"]) for r in rows)
        path = self.parts / f"part-{first:08d}-{uuid.uuid4().hex[:12]}{self.format}"
        write_table(pd.DataFrame(rows), path)
        return path

    def assemble(self, columns_first=("case",), columns_last=("status", "message")):
        """Read every chunk, check each case is there once, write ``output``; return the DataFrame."""
        import pandas as pd

        frames = [read_table(f) for f in self.chunk_files()]
        df = pd.concat(frames, ignore_index=True) if frames else pd.DataFrame({"case": []})
        ids = df["case"].astype(int)
        dup = ids[ids.duplicated()].unique().tolist()
        if dup:
            raise EosfillError(f"study store {self.parts}: case ids {dup[:10]} appear more than once")
        missing = sorted(set(range(self.n_cases)) - set(ids.tolist()))
        if missing:
            raise EosfillError(f"study store {self.parts}: {len(missing)} cases missing (first {missing[:10]})")
        df = df.sort_values("case", kind="stable").reset_index(drop=True)
        df = order_columns(df, columns_first, columns_last)
        write_table(df, self.output)
        for f in self.parts.iterdir():
            f.unlink()
        self.parts.rmdir()
        return df


def order_columns(df, first=("case",), last=("status", "message")):
    cols = [c for c in first if c in df.columns]
    cols += [c for c in df.columns if c not in first and c not in last]
    cols += [c for c in last if c in df.columns]
    return df[cols]
