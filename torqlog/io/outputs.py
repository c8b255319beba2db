"""Writing outputs safely: never over an input, never half-written.

Two rules every command and every writer in torqlog follows:

1. **Outputs never overwrite inputs.** Before anything is read, :func:`check_outputs`
   resolves every output path against every input path by real path (symbolic links
   followed, the same file under two names caught) and refuses a clash with one
   sentence (:class:`~torqlog.errors.UsageError`, exit 2). Two outputs naming the same
   file are refused too.
2. **Writes are atomic.** :func:`atomic_path` hands out a temporary file in the target's
   own folder and renames it into place (:func:`os.replace`) only when the writer
   finished; an interrupted run leaves the old good file, never half a new one. The
   temporary name starts with a dot and ends in ``.tmp`` so folder discovery never takes
   it for a log.

Files torqlog writes that a later run might find in a folder of logs (the per-cycle
Parquet table and the per-shift CSV of ``trend --out-dir``) are recognised by
:func:`is_torqlog_output` from their name and their content (Parquet metadata key
:data:`OUTPUT_METADATA_KEY`, or the columns of the CSV header), not by luck.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterable, Iterator, Mapping
from pathlib import Path

from torqlog.errors import UsageError

#: Key torqlog puts in the schema metadata of every Parquet table it writes.
OUTPUT_METADATA_KEY = b"torqlog.output"

#: Header columns of the CSV tables torqlog writes (trend rows by shift, day, file or
#: hour; per-cycle rows of trend and of ``cycles --format csv``; the fleet table): a CSV
#: whose header holds all of one set is an output of torqlog, not a logger export.
OUTPUT_CSV_COLUMNS: tuple[frozenset[str], ...] = (
    frozenset({"machine", "start_time", "cycles", "cycles_total", "flagged_share"}),
    frozenset({"machine", "file", "start_time", "cycle", "energy_swing_J"}),
    frozenset({"cycle", "t_start_s", "energy_swing_J", "cs", "flag"}),
    # the fleet table (torqlog.fleet.compare.FLEET_COLUMNS) of the demo's fleet.csv
    frozenset({"rank", "machine", "last_log", "cs_p90", "status"}),
)

#: Names torqlog gives the files of ``trend --out-dir``.
OUTPUT_NAMES: tuple[str, ...] = ("cycles.parquet", "shifts.csv")

PathLike = str | os.PathLike


def _same_file(a: Path, b: Path) -> bool:
    if a == b:
        return True
    try:
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def _items(named: Mapping[str, PathLike | Iterable[PathLike] | None]
           ) -> list[tuple[str, Path]]:
    out: list[tuple[str, Path]] = []
    for label, value in named.items():
        if value is None or value == "":
            continue
        values = [value] if isinstance(value, str | os.PathLike) else list(value)
        for v in values:
            if v is None or v == "" or str(v) == "-":
                continue
            out.append((label, Path(v)))
    return out


def check_outputs(outputs: Mapping[str, PathLike | Iterable[PathLike] | None],
                  inputs: Mapping[str, PathLike | Iterable[PathLike] | None]) -> None:
    """Refuse outputs that would overwrite an input or each other (call before reading).

    Parameters
    ----------
    outputs : mapping
        Option name -> output path, list of paths, or None when not given
        (``{"-o": "out.json", "--plot": "cycles.png"}``). ``"-"`` (stdout) is skipped.
    inputs : mapping
        Label -> input path(s) or None (``{"log": "press.csv", "--profile": "p.toml"}``).
        A folder given as an input covers nothing by itself; pass the files found in it.

    Raises
    ------
    UsageError
        One sentence naming the output option, the file and the input it would destroy.

    Examples
    --------
    >>> check_outputs({"-o": "a.json"}, {"log": "a.csv"})
    >>> try:
    ...     check_outputs({"-o": "a.csv"}, {"log": "a.csv"})
    ... except UsageError as exc:
    ...     print(str(exc)[:32])
    -o a.csv is the input log a.csv;
    """
    ins = [(label, p, p.resolve()) for label, p in _items(inputs)]
    seen: list[tuple[str, Path, Path]] = []
    for label, p in _items(outputs):
        real = p.resolve()
        for in_label, in_p, in_real in ins:
            if _same_file(real, in_real):
                raise UsageError(f"{label} {p} is the input {in_label} {in_p}; torqlog never "
                                 "writes over its inputs: choose another output file")
        for other_label, other_p, other_real in seen:
            if _same_file(real, other_real):
                raise UsageError(f"{label} {p} and {other_label} {other_p} name the same file; "
                                 "give each output its own file")
        seen.append((label, p, real))


@contextlib.contextmanager
def atomic_path(path: PathLike) -> Iterator[Path]:
    """Context manager: a temporary path beside ``path``, renamed onto it on success.

    Write the whole output to the yielded path; when the ``with`` block ends without an
    exception the file replaces ``path`` in one step (:func:`os.replace`); otherwise the
    temporary file is removed and ``path`` is left as it was. The folder must exist.

    Parameters
    ----------
    path : str or PathLike
        The final output file.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> with atomic_path(d / "out.txt") as tmp:
    ...     _ = tmp.write_text("done")
    >>> (d / "out.txt").read_text()
    'done'
    """
    final = Path(path)
    if final.exists() and not final.is_file():  # /dev/null, a pipe: nothing to replace
        yield final
        return
    folder = final.parent if str(final.parent) else Path(".")
    if not folder.is_dir():
        raise UsageError(f"{final}: folder {folder} does not exist; create it or write "
                         "elsewhere")
    fd, tmp_name = tempfile.mkstemp(prefix=f".{final.name}.", suffix=".tmp", dir=folder)
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        yield tmp
        if final.exists():
            with contextlib.suppress(OSError):
                os.chmod(tmp, final.stat().st_mode & 0o7777)
        else:
            with contextlib.suppress(OSError):
                umask = os.umask(0)
                os.umask(umask)
                os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, final)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise


def write_text(path: PathLike, text: str) -> Path:
    """Write text (UTF-8) to ``path`` atomically; returns the path.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "a.json"
    >>> write_text(p, "{}").read_text()
    '{}'
    """
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return Path(path)


def write_bytes(path: PathLike, data: bytes) -> Path:
    """Write bytes to ``path`` atomically; returns the path."""
    with atomic_path(path) as tmp:
        tmp.write_bytes(data)
    return Path(path)


#: File endings that name an output format of ``--format``.
FORMAT_SUFFIXES: dict[str, str] = {".csv": "csv", ".json": "json", ".jsonl": "jsonl",
                                   ".xlsx": "xlsx", ".parquet": "parquet", ".pq": "parquet"}


def check_format_suffix(fmt: str, path: PathLike | None) -> None:
    """Refuse a file format written under a name that says another one
    (``--format parquet -o out.csv``): a later reader would trust the suffix.

    A suffix that names no format (``.txt``, ``.out``, none) is accepted for any format,
    and ``table`` (text for people) for any name but another format's.

    Raises
    ------
    UsageError
        Naming the format, the file's suffix and the two ways out.

    Examples
    --------
    >>> check_format_suffix("parquet", "c.parquet"); check_format_suffix("csv", "c.txt")
    >>> try:
    ...     check_format_suffix("parquet", "c2.csv")
    ... except UsageError as exc:
    ...     print(str(exc)[:59])
    --format parquet writes Parquet, but -o c2.csv ends in .csv
    """
    if not path or str(path) == "-":
        return
    p = Path(path)
    said = FORMAT_SUFFIXES.get(p.suffix.lower())
    if said is None or said == fmt:
        return
    kind = {"parquet": "Parquet", "xlsx": "an xlsx workbook", "table": "a text table"}.get(
        fmt, fmt.upper())
    own = next((s for s, f in FORMAT_SUFFIXES.items() if f == fmt), None)
    fix = f"name it {p.stem}{own}, or " if own else ""
    raise UsageError(f"--format {fmt} writes {kind}, but -o {path} ends in {p.suffix} "
                     f"(a {said} file); {fix}give --format {said}")


def is_torqlog_output(path: PathLike) -> bool:
    """Whether a file is a table torqlog itself wrote (so discovery must skip it).

    A Parquet file is recognised by the :data:`OUTPUT_METADATA_KEY` in its schema
    metadata (or, written before that mark, by its name in :data:`OUTPUT_NAMES` and its
    columns); a CSV by a header holding one of the column sets of
    :data:`OUTPUT_CSV_COLUMNS` (no logger export has them). Temporary files of
    :func:`atomic_path` (``.name.XXXX.tmp``) are outputs too.
    """
    p = Path(path)
    name = p.name.lower()
    if name.startswith(".") and name.endswith(".tmp"):
        return True
    if name.endswith((".parquet", ".pq")):
        try:
            import pyarrow.parquet as pq

            schema = pq.read_schema(p)
        except Exception:  # noqa: BLE001 - unreadable: let the reader name the problem
            return False
        if OUTPUT_METADATA_KEY in (schema.metadata or {}):
            return True
        # written before the mark existed: its name and its columns
        return name in OUTPUT_NAMES and any(cols <= set(schema.names)
                                            for cols in OUTPUT_CSV_COLUMNS)
    if name.endswith((".csv", ".txt")):
        try:
            with open(p, encoding="utf-8", errors="replace") as fh:
                first = fh.readline(4096)
        except OSError:
            return False
        fields = {f.strip().strip('"') for f in first.strip().split(",")}
        return any(cols <= fields for cols in OUTPUT_CSV_COLUMNS)
    return False


def parquet_metadata(kind: str) -> dict[bytes, bytes]:
    """Schema metadata that marks a Parquet table as torqlog's own ``kind`` of output."""
    from torqlog._version import __version__

    return {OUTPUT_METADATA_KEY: f'{{"kind": "{kind}", "version": "{__version__}"}}'.encode()}


__all__ = ["FORMAT_SUFFIXES", "OUTPUT_CSV_COLUMNS", "OUTPUT_METADATA_KEY", "OUTPUT_NAMES",
           "atomic_path", "check_format_suffix", "check_outputs", "is_torqlog_output",
           "parquet_metadata", "write_bytes", "write_text"]
