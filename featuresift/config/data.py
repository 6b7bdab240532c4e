"""Reading the data file and choosing the candidate columns."""

from __future__ import annotations

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
            frame = pd.read_csv(path, sep=fmt.separator, decimal=fmt.decimal,
                                encoding=fmt.encoding)
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
