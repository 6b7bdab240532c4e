"""Reading the data file and choosing the candidate columns."""

from __future__ import annotations

import gzip
from pathlib import Path

import numpy as np
import pandas as pd

from featuresift.config.context import _Context, _suggest
from featuresift.config.csvformat import _COMMA_NUMBER, SAMPLE_BYTES, CsvFormat, sniff_csv
from featuresift.config.schema import DataSpec, RunConfig
from featuresift.errors import InputError

_DATA_SUFFIXES = {".csv": "csv", ".gz": "csv", ".parquet": "parquet", ".pq": "parquet"}


def _read_frame(spec: DataSpec, ctx: _Context) -> tuple[pd.DataFrame, CsvFormat | None]:
    """The data as read, and how the CSV file is written (None for Parquet)."""
    path = spec.path
    suffix = path.suffix.lower()
    kind = _DATA_SUFFIXES.get(suffix)
    if kind is None or (suffix == ".gz" and not path.name.lower().endswith(".csv.gz")):
        raise ctx.error(
            f"unsupported file type '{path.name}'; use .csv, .csv.gz, .parquet or .pq",
            "data.path",
        )
    if not path.is_file():
        what = "is a folder" if path.is_dir() else "not found"
        raise ctx.error(f"data file {what}: {path}", "data.path")
    fmt = None
    try:
        if kind == "parquet":
            try:
                import pyarrow  # noqa: F401
            except ImportError:
                raise ctx.error(
                    "reading Parquet needs pyarrow (pip install 'featuresift[parquet]')",
                    "data.path",
                ) from None
            frame = pd.read_parquet(path)
        else:
            fmt = sniff_csv(path, separator=spec.separator, decimal=spec.decimal,
                            encoding=spec.encoding)
            frame = read_csv_lean(path, fmt, block=_block_filter(spec))
    except InputError as exc:
        raise ctx.rekey(exc, "data.path") from None
    except pd.errors.EmptyDataError:
        raise ctx.error(f"data file {path.name} is empty", "data.path") from None
    except UnicodeDecodeError as exc:
        raise ctx.error(
            f"data file {path.name} is not {exc.encoding} text after its first "
            f"{SAMPLE_BYTES // 2**20} MB (byte {exc.object[exc.start]:#04x}); set "
            "data.encoding to the file's encoding (cp1252 for most Windows exports in "
            "Western Europe, latin-1, utf-8)", "data.encoding",
        ) from None
    except (pd.errors.ParserError, ValueError, OSError) as exc:
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise ctx.error(f"cannot read {path.name}: {first}", "data.path") from None
    frame.columns = [str(c) for c in frame.columns]
    if fmt is not None and len(fmt.header) == len(frame.columns):
        frame = _drop_blank_columns(frame, fmt, ctx)
    if frame.columns.duplicated().any():
        dup = sorted(set(frame.columns[frame.columns.duplicated()]))
        raise ctx.error(f"{path.name} has repeated column names: {', '.join(dup)}", "data.path")
    if len(frame) == 0:
        raise ctx.error(f"data file {path.name} has a header but no rows", "data.path")
    return frame, fmt


LEAN_MIN_BYTES = 16 << 20
"""CSV files at least this big are read in chunks by :func:`read_csv_lean`."""

_CHUNK_VALUES = 1 << 19
"""Values parsed per chunk by :func:`read_csv_lean` (about 4 MB of float64)."""


def _block_filter(spec: DataSpec):
    """Which columns may go to the shared float block: the possible candidates."""
    reserved = {spec.target, *spec.exclude, *spec.categorical}
    wanted = None if spec.features is None else set(spec.features)
    return lambda name: name not in reserved and (wanted is None or name in wanted)


def _count_lines(path: Path) -> int:
    """Number of newline bytes in the (decompressed) file: a bound on its rows."""
    opener = gzip.open if path.name.lower().endswith(".gz") else open
    count = 0
    with opener(path, "rb") as fh:
        while chunk := fh.read(1 << 24):
            count += chunk.count(b"\n")
    return count


def read_csv_lean(path: Path, fmt: CsvFormat, block=None,
                  min_bytes: int | None = None) -> pd.DataFrame:
    """Read a CSV as :func:`pandas.read_csv` does, with its float columns in one buffer.

    A whole-file ``read_csv`` holds the parser's per-chunk arrays, their concatenation
    and the consolidated frame at once: about three times the size of the data. For a
    file of at least ``min_bytes`` (default :data:`LEAN_MIN_BYTES`) this reads chunks
    of rows and writes the float64 columns accepted by ``block(name)`` straight into
    one C-ordered float64 array (rows x those columns), which the returned frame's
    columns are views of; :func:`candidate_matrix` then hands that array to the
    problem without a copy. Other columns are concatenated as ``read_csv`` would.
    Values are parsed by the same reader with the same settings, so they are the same;
    when a block column is not float64 in some chunk (text, booleans, a late missing
    value in an integer column) the file is read again whole, as before.

    Examples
    --------
    >>> import tempfile
    >>> from featuresift.config.csvformat import sniff_csv
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = Path(d, "lots.csv")
    ...     _ = p.write_text("grade,moisture_pct,ash_pct\\n1,12.5,0.61\\n0,13.1,0.7\\n")
    ...     frame = read_csv_lean(p, sniff_csv(p), min_bytes=0)
    >>> X = candidate_matrix(frame, ["moisture_pct", "ash_pct"])
    >>> frame.dtypes.astype(str).tolist(), X.shape, np.shares_memory(X, frame["ash_pct"].to_numpy())
    (['int64', 'float64', 'float64'], (2, 2), True)
    """
    kwargs = {"sep": fmt.separator, "decimal": fmt.decimal, "encoding": fmt.encoding}
    limit = LEAN_MIN_BYTES if min_bytes is None else min_bytes
    if path.stat().st_size < limit or len(fmt.header) < 2:
        return pd.read_csv(path, **kwargs)
    rows = max(256, _CHUNK_VALUES // len(fmt.header))
    X = None
    names: list[str] = []
    others: dict[str, list] = {}
    order: list[str] = []
    n = 0
    with pd.read_csv(path, chunksize=rows, **kwargs) as reader:
        for chunk in reader:
            if X is None:
                order = list(chunk.columns)
                blank = {c for c, raw in zip(order, fmt.header) if not raw.strip()}
                names = [c for c in order if chunk[c].dtype == np.float64 and c not in blank
                         and (block is None or block(str(c)))]
                if not names:
                    break
                X = np.empty((_count_lines(path) + 1, len(names)))
                others = {c: [] for c in order if c not in set(names)}
            if list(chunk.columns) != order or any(
                    chunk[c].dtype != np.float64 for c in names) or n + len(chunk) > len(X):
                X = None
                break
            for j, c in enumerate(names):
                X[n:n + len(chunk), j] = chunk[c].to_numpy()
            for c, parts in others.items():
                parts.append(chunk[c])
            n += len(chunk)
    if X is None or n == 0:
        return pd.read_csv(path, **kwargs)
    X = X[:n]
    floats = pd.DataFrame(X, columns=names, copy=False)
    rest = pd.DataFrame({c: pd.concat(parts, ignore_index=True) for c, parts in others.items()})
    frame = pd.concat([floats, rest], axis=1)[order]
    del others, rest, chunk
    _return_free_memory()
    return frame


def _return_free_memory() -> None:
    """Give the parser's freed chunk buffers back to the system (glibc's malloc_trim).

    glibc keeps freed buffers of a few MB in the process heap, where they would count in
    the resident size for the rest of the run; elsewhere this does nothing.
    """
    try:
        import ctypes

        ctypes.CDLL("libc.so.6").malloc_trim(0)
    except (OSError, AttributeError):
        pass


def candidate_matrix(frame: pd.DataFrame, names: list[str]) -> np.ndarray | None:
    """The C-ordered float64 array whose columns are exactly ``frame[names]``, if any.

    :func:`read_csv_lean` stores the candidate float columns of a big file as views of
    one array; when ``names`` are exactly that array's columns, in order, the array is
    returned (no copy); otherwise None.
    """
    if not names:
        return None
    try:
        cols = [frame[c] for c in names]
    except KeyError:
        return None
    if any(c.dtype != np.float64 for c in cols):
        return None
    first = cols[0].to_numpy()
    root = first
    while isinstance(root.base, np.ndarray):
        root = root.base
    n, p = len(frame), len(names)
    if root.ndim != 2 or root.dtype != np.float64 or root.shape[1] != p \
            or root.shape[0] < n or not root.flags.c_contiguous:
        return None
    start = root.__array_interface__["data"][0]
    for j, col in enumerate(cols):
        a = col.to_numpy()
        if a.__array_interface__["data"][0] != start + 8 * j or a.strides != (8 * p,) \
                or a.shape != (n,):
            return None
    return root[:n]


def _drop_blank_columns(frame: pd.DataFrame, fmt: CsvFormat, ctx: _Context) -> pd.DataFrame:
    """Drop columns with neither a name nor values (a trailing separator); refuse
    columns with values but no name (the reader would call them ``Unnamed: k``)."""
    drop = []
    for i, (raw, col) in enumerate(zip(fmt.header, frame.columns)):
        if raw.strip():
            continue
        values = frame[col]
        if values.isna().all():
            drop.append(col)
            continue
        row = int(np.flatnonzero(values.notna().to_numpy())[0])
        raise ctx.error(
            f"column {i + 1} of the data file has no name in the header but holds "
            f"values ({values.iloc[row]!r} in data row {row + 1}); name it, or remove it",
            "data.path",
        )
    return frame.drop(columns=drop) if drop else frame


def _column_error(frame: pd.DataFrame, name: str, key: str, ctx: _Context, role: str):
    return ctx.error(
        f"{role} '{name}' is not a column of the data{_suggest(name, frame.columns)}", key
    )


def _check_categorical_model(cfg: RunConfig, ctx: _Context) -> None:
    """Categorical columns need the one_hot step or a model that takes categories."""
    if "one_hot" in cfg.model.preprocessing and not cfg.data.categorical:
        steps = list(cfg.model.preprocessing)
        raise ctx.error(
            "one_hot encodes the columns listed under data.categorical, and there are none: "
            "list the text or code columns there, or remove one_hot",
            f"model.preprocessing[{steps.index('one_hot')}]",
        )
    if not cfg.data.categorical or "one_hot" in cfg.model.preprocessing:
        return
    native = cfg.model.params.get("categorical_features") == "from_dtype"
    if not native:
        raise ctx.error(
            f"categorical column(s) {', '.join(cfg.data.categorical)} need the one_hot step "
            "in model.preprocessing, or a model that takes categories (for example "
            "HistGradientBoostingClassifier with params {categorical_features: from_dtype})",
            "data.categorical",
        )
    if cfg.model.preprocessing:
        raise ctx.error("with native categories (categorical_features: from_dtype) the "
                        "preprocessing steps would meet text values; add one_hot or drop "
                        "them", "model.preprocessing")


def candidate_frame(cfg: RunConfig) -> pd.DataFrame:
    """The candidate columns as the model sees them: numbers, and ``category`` columns."""
    frame, name = cfg.frame, cfg.data.path.name
    return pd.DataFrame({
        c: frame[c].astype("category") if c in cfg.data.categorical
        else _numeric_column(frame, c, name)
        for c in cfg.candidates
    })


def _numeric_column(frame: pd.DataFrame, name: str, file_name: str) -> pd.Series:
    col = frame[name]
    if pd.api.types.is_bool_dtype(col):
        return col.astype(float)
    if not pd.api.types.is_numeric_dtype(col):
        converted = pd.to_numeric(col, errors="coerce")
        bad = col.notna() & converted.isna()
        if bad.any():
            row = int(np.flatnonzero(bad.to_numpy())[0])
            cell = col.iloc[row]
            advice = ("candidate measurements must be numbers (empty cells count as "
                      "missing), or list the column under data.exclude")
            if isinstance(cell, str) and _COMMA_NUMBER.match(cell.strip()):
                advice = "it looks like a decimal comma: add data.decimal: \",\" to the config"
            raise InputError(
                f"data file {file_name}, column '{name}': not numeric (data row {row + 1} "
                f"holds {cell!r}); {advice}"
            )
        col = converted
    values = col.astype(float)
    if values.isna().all():
        raise InputError(
            f"data file {file_name}, column '{name}': every value is missing; "
            "list the column under data.exclude"
        )
    if np.isinf(values.to_numpy()).any():
        row = int(np.flatnonzero(np.isinf(values.to_numpy()))[0])
        raise InputError(
            f"data file {file_name}, column '{name}': infinite value in data row {row + 1}"
        )
    return values


def _select_candidates(cfg: RunConfig, ctx: _Context) -> list[str]:
    frame, spec = cfg.frame, cfg.data
    if spec.target not in frame.columns:
        raise _column_error(frame, spec.target, "data.target", ctx, "target")
    group = cfg.cv.group_column
    if group is not None:
        if group not in frame.columns:
            raise _column_error(frame, group, "cv.group_column", ctx, "group column")
        if group == spec.target:
            raise ctx.error("the group column cannot be the target", "cv.group_column")
    for i, name in enumerate(spec.exclude):
        if name not in frame.columns:
            raise _column_error(frame, name, f"data.exclude[{i}]", ctx, "excluded column")
    reserved = {spec.target, group}
    if spec.features is None:
        candidates = [c for c in frame.columns if c not in reserved and c not in spec.exclude]
    else:
        candidates = list(spec.features)
        for i, name in enumerate(candidates):
            key = f"data.features[{i}]"
            if name not in frame.columns:
                raise _column_error(frame, name, key, ctx, "feature")
            if name == spec.target:
                raise ctx.error(f"'{name}' is the target; it cannot be a feature", key)
            if name == group:
                raise ctx.error(f"'{name}' is the CV group column; it cannot be a feature", key)
            if name in spec.exclude:
                raise ctx.error(f"'{name}' is also listed under data.exclude", key)
        order = {c: i for i, c in enumerate(frame.columns)}
        candidates.sort(key=order.__getitem__)
    if not candidates:
        raise ctx.error("no candidate feature columns are left", "data")
    return candidates
