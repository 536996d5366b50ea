"""Chunks as a Dask DataFrame, for pipelines that already run on Dask.

    frames = segment.dataframes.chunk_dataframes(["s3://docs-bucket/manuals/"], Settings(max_tokens=256))
    frames.chunks      # one row per chunk, columns as segment.columnar.arrow_schema()
    frames.errors      # one row per file that failed: source, status, reason
    frames.write_parquet("chunks.parquet")   # a dataset partitioned by format

Inputs are local paths or fsspec URLs (`memory://`, `file://`, and any object store the user's
fsspec has a driver for). A folder stands for every supported file below it, named relative to
the folder (as `segment build` names them); a file is named by its path as given, without the
protocol (as `segment chunks` names it). Each partition parses a batch of files on whichever worker
Dask picks; a file that fails becomes a row of `errors`, never a failed graph. Both frames come
from the same tasks, so `dask.compute(frames.chunks, frames.errors)` parses every file once.

Needs the `cluster` extra: `pip install 'docsegment[cluster]'` (dask, distributed, pyarrow, fsspec).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from segment.adapters import adapter_for, is_supported
from segment.columnar import arrow_schema, to_row
from segment.errors import SegmentError, UnsupportedFormat
from segment.settings import Settings

STATUS = "error_status"
REASON = "error_reason"
"""Two columns of the raw per-partition frame that carry a failed file's status and reason."""


@dataclass(frozen=True)
class SourceFile:
    """One input file: where to read it and the name its records carry."""

    url: str
    source: str


@dataclass(frozen=True)
class ChunkFrames:
    """The chunks of some files and the files that failed, as two lazy Dask DataFrames."""

    chunks: Any
    """dask.dataframe.DataFrame, one row per chunk (columns: `segment.columnar.arrow_schema()`)."""
    errors: Any
    """dask.dataframe.DataFrame, one row per failed file: source, status, reason."""

    def write_parquet(self, dest: str | Path, **kwargs: Any) -> None:
        """Write the chunks as a Parquet dataset partitioned by format (`format=<name>/`)."""
        self.chunks.to_parquet(
            str(dest), partition_on=["format"], schema=arrow_schema(), write_index=False, **kwargs
        )


def list_sources(
    urls: Iterable[str | Path], storage_options: dict[str, Any] | None = None
) -> list[SourceFile]:
    """Expand folders into their supported files; name each file as described in the module."""
    import fsspec
    from fsspec.core import split_protocol

    found: list[SourceFile] = []
    for raw in urls:
        url = str(raw)
        fs, root = fsspec.core.url_to_fs(url, **(storage_options or {}))
        protocol, given = split_protocol(url)
        if fs.isdir(root):
            prefix = root.rstrip("/") + "/"
            for path in sorted(fs.find(root)):
                rel = path[len(prefix) :] if path.startswith(prefix) else Path(path).name
                if is_supported(rel):
                    full = f"{protocol}://{path}" if protocol else path
                    found.append(SourceFile(full, rel))
        else:
            found.append(SourceFile(url, given.lstrip("/") if protocol else given))
    return found


def _empty(pd: Any, pa: Any) -> Any:
    schema = arrow_schema().append(pa.field(STATUS, pa.string())).append(pa.field(REASON, pa.string()))
    return schema, schema.empty_table().to_pandas(types_mapper=pd.ArrowDtype)


def chunk_partition(batch: Sequence[SourceFile], settings: Settings, storage_options: dict[str, Any]) -> Any:
    """Parse and cut a batch of files into one pandas frame (chunk rows, then error rows)."""
    import fsspec
    import pandas as pd
    import pyarrow as pa

    import segment

    schema, _ = _empty(pd, pa)
    rows: list[dict[str, Any]] = []
    for item in batch:
        try:
            fmt = adapter_for(item.source).format
        except UnsupportedFormat:
            fmt = None
        try:
            fs, path = fsspec.core.url_to_fs(item.url, **storage_options)
            size = fs.size(path)
            if size is not None and size > settings.max_file_bytes:
                raise segment.TooLarge(
                    item.source, f"file is {size} bytes, over max_file_bytes={settings.max_file_bytes}"
                )
            with fs.open(path, "rb") as fh:
                data = fh.read()
            document = segment.parse_bytes(data, item.source, settings)
            for chunk in segment.chunk(document, settings):
                rows.append({**to_row(chunk.to_dict()), STATUS: None, REASON: None})
        except SegmentError as exc:
            rows.append({"source": item.source, "format": fmt, STATUS: exc.status, REASON: exc.reason})
        except FileNotFoundError:
            rows.append({"source": item.source, "format": fmt, STATUS: "missing", REASON: "no such file"})
        except OSError as exc:
            reason = f"cannot read: {exc.strerror or exc}"
            rows.append({"source": item.source, "format": fmt, STATUS: "unreadable", REASON: reason})
        except Exception as exc:  # a bug of ours must not fail the graph: it becomes a row
            reason = f"{type(exc).__name__}: {exc}"
            rows.append({"source": item.source, "format": fmt, STATUS: "error", REASON: reason})
    return pa.Table.from_pylist(rows, schema=schema).to_pandas(types_mapper=pd.ArrowDtype)


def chunk_dataframes(
    urls: Iterable[str | Path],
    settings: Settings | None = None,
    *,
    files_per_partition: int = 16,
    storage_options: dict[str, Any] | None = None,
) -> ChunkFrames:
    """The chunks of every file named by `urls` (paths, fsspec URLs, folders) as Dask DataFrames."""
    import dask.dataframe as dd
    import pandas as pd
    import pyarrow as pa

    settings = settings or Settings()
    options = dict(storage_options or {})
    files = list_sources(urls, options)
    size = max(1, files_per_partition)
    batches = [files[i : i + size] for i in range(0, len(files), size)] or [[]]
    _, meta = _empty(pd, pa)
    raw = dd.from_map(
        chunk_partition,
        batches,
        settings=settings,
        storage_options=options,
        meta=meta,
        label="docsegment-chunks",
        enforce_metadata=False,
    )
    failed = ~raw[STATUS].isna()
    chunks = raw[~failed].drop(columns=[STATUS, REASON])
    errors = raw[failed][["source", STATUS, REASON]].rename(columns={STATUS: "status", REASON: "reason"})
    return ChunkFrames(chunks=chunks, errors=errors)
