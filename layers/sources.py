"""Finding and opening a site's files: ``site.toml`` and one file (or GeoPackage layer) per layer.

Opening is kept apart from validation (:mod:`layers.validate`) so that validation can be
tested on in-memory frames.
"""

from __future__ import annotations

import datetime
import difflib
import hashlib
import json
import os
import re
import sqlite3
import tomllib
import warnings
import xml.etree.ElementTree as ET
from collections.abc import Iterable
from pathlib import Path
from typing import Any

import geopandas as gpd
import pyogrio

from .errors import Problem
from .model import LAYER_NAMES, REQUIRED_LAYERS

#: file extensions tried for ``<layer>.<ext>`` (anything pyogrio reads may be named in [layers])
LAYER_EXTENSIONS: tuple[str, ...] = (".gpkg", ".geojson", ".json", ".shp", ".fgb", ".gml", ".kml")
SITE_TOML = "site.toml"
SITE_GPKG = "site.gpkg"
#: UTF-8 byte-order mark (EF BB BF), accepted at the start of site.toml
UTF8_BOM = b"\xef\xbb\xbf"


def read_config(root: Path) -> tuple[dict[str, Any], list[Problem]]:
    """Parse ``root/site.toml``; return (config, problems).

    The file is UTF-8 (TOML 1.0); a byte-order mark at its start, as some Windows editors
    write, is accepted and dropped. Only the syntax is checked here: the keys and their
    types are checked by :func:`layers.validate.build_site` (``[site]``, ``[modules]``),
    :func:`locate_layers` (``[layers]``) and, for the design tables, by the caller.
    """
    path = root / SITE_TOML
    if not root.is_dir():
        return {}, [Problem(str(root), None, "is not a folder (a site is a folder with site.toml)")]
    if not path.is_file():
        return {}, [Problem(SITE_TOML, None, f"missing in {root}")]
    try:
        data = path.read_bytes()
    except OSError as exc:
        return {}, [Problem(SITE_TOML, None, f"cannot be read: {_short(exc)}")]
    try:
        return tomllib.loads(data.removeprefix(UTF8_BOM).decode("utf-8")), []
    except UnicodeDecodeError as exc:
        return {}, [Problem(SITE_TOML, None, f"cannot be parsed: not UTF-8 text ({exc.reason})")]
    except tomllib.TOMLDecodeError as exc:
        return {}, [Problem(SITE_TOML, None, f"cannot be parsed: {exc}")]


def toml_type(value: Any) -> str:
    """The type of a TOML value in words, for messages: ``'a string'``, ``'a table'``, ..."""
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, int):
        return "an integer"
    if isinstance(value, float):
        return "a float"
    if isinstance(value, str):
        return "a string" if value else "an empty string"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list | tuple):
        return "an array"
    if isinstance(value, datetime.date | datetime.time):
        return "a date/time"
    return f"a {type(value).__name__}"


def unknown_key(where: str, name: str, known: Iterable[str], what: str = "key") -> Problem:
    """The problem for an unknown key or table ``name`` of site.toml at dotted ``where``,
    suggesting the closest known name (``difflib.get_close_matches``) or listing them all."""
    known = list(known)
    close = difflib.get_close_matches(str(name), known, n=1)
    hint = f"did you mean {close[0]!r}?" if close else f"expected one of {', '.join(known)}"
    return Problem(SITE_TOML, where, f"unknown {what}; {hint}")


def locate_layers(root: Path, config: dict[str, Any]) -> tuple[dict[str, str], list[Problem]]:
    """Where each layer comes from: ``{layer: "file"}`` or ``{layer: "file.gpkg:layername"}``.

    Order of precedence: ``[layers]`` in site.toml; a layer of that name in ``site.gpkg``;
    a single ``<layer>.<ext>`` file. A missing required layer is a problem; ``grid`` is optional.
    """
    problems: list[Problem] = []
    mapping = config.get("layers", {})
    if not isinstance(mapping, dict):
        return {}, [
            Problem(
                SITE_TOML,
                "layers",
                f"[layers] must be a table of layer = 'file', not {toml_type(mapping)}",
            )
        ]
    for key in mapping:
        if key not in LAYER_NAMES:
            problems.append(unknown_key(f"layers.{key}", key, LAYER_NAMES, "layer"))
    gpkg_layers: set[str] = set()
    if (root / SITE_GPKG).is_file():
        try:
            gpkg_layers = {str(name) for name, _ in pyogrio.list_layers(root / SITE_GPKG)}
        except Exception as exc:
            problems.append(Problem(SITE_GPKG, None, f"cannot be read: {_short(exc)}"))
    found: dict[str, str] = {}
    for name in LAYER_NAMES:
        if name in mapping:
            spec = mapping[name]
            if not isinstance(spec, str) or not spec:
                problems.append(
                    Problem(
                        SITE_TOML,
                        f"layers.{name}",
                        f"must be a file name, not {toml_type(spec)}",
                    )
                )
                continue
            file_part = spec.rsplit(":", 1)[0] if _has_layer_suffix(spec) else spec
            if _leads_nowhere(root / file_part):
                problems.append(_dangling(name, file_part))
                continue
            if not (root / file_part).exists():  # a file, or a folder dataset (.gdb)
                problems.append(
                    Problem(name, None, f"file {file_part!r} named in [layers] not found")
                )
                continue
            found[name] = spec
            continue
        if name in gpkg_layers:
            found[name] = f"{SITE_GPKG}:{name}"
            continue
        candidates = sorted(
            p.name for p in root.glob(f"{name}.*") if p.suffix.lower() in LAYER_EXTENSIONS
        )
        if len(candidates) > 1:
            problems.append(
                Problem(
                    name,
                    None,
                    f"several files could be this layer ({', '.join(candidates)}); "
                    "keep one or name it in [layers]",
                )
            )
        elif candidates and _leads_nowhere(root / candidates[0]):
            problems.append(_dangling(name, candidates[0]))
        elif candidates:
            found[name] = candidates[0]
        elif name in REQUIRED_LAYERS:
            problems.append(
                Problem(
                    name,
                    None,
                    f"required layer missing: no {name}.<ext> file, no layer {name!r} "
                    f"in {SITE_GPKG}, and no [layers] entry",
                )
            )
    return found, problems


def _leads_nowhere(path: Path) -> bool:
    """Whether ``path`` is a symbolic link that leads to no file (a loop or a missing target)."""
    return path.is_symlink() and not path.exists()


def _dangling(name: str, file: str) -> Problem:
    """The problem of a layer whose file is a symbolic link that leads to no file."""
    return Problem(
        name,
        None,
        f"{file!r} is a symbolic link that leads to no file (a loop or a missing target)",
    )


def _has_layer_suffix(spec: str) -> bool:
    head, sep, tail = spec.rpartition(":")
    return bool(sep) and bool(head) and "/" not in tail and "\\" not in tail and len(head) > 1


def read_layer(
    root: Path, name: str, spec: str, memo: LayerMemo | None = None
) -> tuple[gpd.GeoDataFrame | None, list[Problem]]:
    """Read one layer with pyogrio; a failure is a problem naming the layer and the file.
    ``memo``: the layers this process read last (:class:`LayerMemo`), taken from memory when
    what the layer is read from is the same."""
    if _has_layer_suffix(spec):
        file_part, layer = spec.rsplit(":", 1)
    else:
        file_part, layer = spec, None
    path = root / file_part
    digest = memo.digest(root, spec) if memo is not None else None
    if digest is not None:
        kept = memo.frame(root, spec, digest)
        if kept is not None:
            return kept, []
    if path.is_file() and path.stat().st_size == 0:
        return None, [Problem(name, None, f"cannot read {spec}: the file is empty")]
    try:
        kwargs = {"layer": layer} if layer else {}
        with warnings.catch_warnings():
            # GDAL reads an unclosed polygon ring with a warning on the user's terminal; the
            # geometry is then reported as a problem of its feature
            warnings.filterwarnings(
                "ignore", message="Non closed ring detected", category=RuntimeWarning
            )
            # a GeoJSON attribute of mixed types (an id 12 among "W1-R1"s) is a JSON column
            # to GDAL; geopandas tries to parse its values as JSON and warns when it cannot,
            # on the user's terminal: the values stay text, which validation reads
            warnings.filterwarnings(
                "ignore", message="Could not parse column .* as JSON", category=UserWarning
            )
            # GDAL renumbers GeoJSON features whose "id" members repeat (the features' own
            # ids are the "id" attribute in their properties, validated as every attribute)
            warnings.filterwarnings(
                "ignore", message="Several features with id = ", category=RuntimeWarning
            )
            # GDAL reads a GeoJSON position of four numbers (x, y, z, m) as x, y, z with a
            # warning naming pyogrio's source line; routeplan drops z (and so m) anyway
            warnings.filterwarnings(
                "ignore", message=".*too many members in array", category=RuntimeWarning
            )
            frame = gpd.read_file(path, engine="pyogrio", **kwargs)
        if _is_sqlite(path):
            stored = _stored_numbers(path, layer, name)
        else:
            stored = _json_booleans(path, name) if layer is None else []
    except Exception as exc:  # pyogrio/GDAL raise many types for unreadable files
        return None, [Problem(name, None, f"cannot read {spec}: {_short(exc)}")]
    if digest is not None and not stored:
        memo.keep(root, spec, digest, frame)
    return frame, stored


def _stored_numbers(path: Path, layer: str | None, name: str) -> list[Problem]:
    """The values of a GeoPackage (SQLite) layer's number attributes that GDAL reads as other
    numbers without a word: SQLite stores any type in any column, and GDAL reads a real
    stored in an INTEGER column as its integer part (2.5 → 2, 1e30 → the largest int64), text
    or a blob in a number column as 0. One problem per value, naming the feature by its id.
    Only the attributes :mod:`layers.validate` reads as numbers are looked at."""
    fields = _number_fields(name)
    if not fields:
        return []
    table = layer or str(pyogrio.list_layers(path)[0][0])
    try:
        con = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True)
    except sqlite3.Error:  # GDAL read it: what it read is validated as usual
        return []
    try:
        quoted = _sql_name(table)
        declared = {
            str(r[1]): str(r[2]).upper() for r in con.execute(f"PRAGMA table_info({quoted})")
        }
        ids = [c for c in declared if c.lower() == "id"]
        problems = []
        for column, kind in declared.items():
            want = fields.get(column.lower())
            if want is None:
                continue
            # what the column's affinity could not make a number of its declared type (SQLite
            # 3 "Datatypes", 3.1: INT → integer, REAL/FLOA/DOUB → real); a text column's
            # values are read as text (a quantity such as "800 mm")
            if "INT" in kind:
                odd: tuple[str, ...] = ("real", "text", "blob")
            elif any(t in kind for t in ("REAL", "FLOA", "DOUB")):
                odd = ("text", "blob")
            else:
                continue
            col = _sql_name(column)
            who = _sql_name(ids[0]) if ids else "NULL"
            rows = con.execute(
                f"SELECT {who}, {col}, typeof({col}) FROM {quoted} WHERE typeof({col}) IN "
                f"({', '.join('?' * len(odd))}) ORDER BY rowid",
                odd,
            ).fetchall()
            what = "a whole number" if want == "int" else "a number"
            for fid, value, stored in rows:
                shown = repr(value) if not isinstance(value, bytes) else f"{len(value)} bytes"
                as_ = {"real": "a real", "text": "text", "blob": "a blob"}[stored]
                problems.append(
                    Problem(
                        name,
                        None if fid is None else str(fid),
                        f"{column} is {shown} in the file ({as_} in a column of type "
                        f"{kind or 'none'}), expected {what}",
                        attribute=column,
                    )
                )
        return problems
    except sqlite3.Error:
        return []
    finally:
        con.close()


def _number_fields(name: str) -> dict[str, str]:
    """The attributes of layer ``name`` that :mod:`layers.validate` reads as numbers, by name:
    ``"int"`` or ``"float"``."""
    from .validate import FIELDS  # validate imports this module

    return {f.name: f.kind for f in FIELDS.get(name, ()) if f.kind in ("int", "float")}


def _json_booleans(path: Path, name: str) -> list[Problem]:
    """The JSON booleans of a GeoJSON file's number attributes (RFC 7946 features): where a
    property holds numbers in some features and ``true``/``false`` in others, GDAL's GeoJSON
    driver makes it an integer or real field and reads ``true`` as 1, ``false`` as 0, without a
    word (a property of booleans alone is read as booleans, refused by validation). One problem
    per value, naming the feature by its ``id`` property (``#n``, its position, without one).
    Files that are not one JSON document with a ``features`` array (GeoJSON sequences, other
    formats, a file that does not begin with ``{``) are left to GDAL; a file without the words
    ``true`` and ``false`` is not parsed."""
    from .validate import _id_text  # validate imports this module

    fields = _number_fields(name)
    if not fields or not path.is_file():
        return []
    with open(path, "rb") as fh:
        # a JSON document is an object first (after a byte-order mark or blanks): a file of
        # another format (a shapefile, a FlatGeobuf …) is not read again here
        if not fh.read(4096).removeprefix(UTF8_BOM).lstrip().startswith(b"{"):
            return []
        fh.seek(0)
        data = fh.read()
    if b"true" not in data and b"false" not in data:
        return []
    try:
        doc = json.loads(data)
    except (ValueError, RecursionError):  # not one JSON document: GDAL read it as it could
        return []
    features = doc.get("features") if isinstance(doc, dict) else None
    if not isinstance(features, list):
        return []
    problems = []
    for i, feature in enumerate(features):
        props = feature.get("properties") if isinstance(feature, dict) else None
        if not isinstance(props, dict):
            continue
        for column, kind in fields.items():
            value = props.get(column)
            if isinstance(value, bool):
                fid = props.get("id")
                fid = "" if isinstance(fid, dict | list) else _id_text(fid)
                what = "a whole number" if kind == "int" else "a number"
                problems.append(
                    Problem(
                        name,
                        fid or f"#{i + 1}",
                        f"{column} is {json.dumps(value)} in the file (a JSON boolean, which "
                        f"GDAL would read as {int(value)}), expected {what}",
                        attribute=column,
                    )
                )
    return problems


class LayerMemo:
    """The layers a process read last, each with a digest of what it was read from, for a
    process that reads the same site again and again (``routeplan plan --watch``): a layer
    whose digest is unchanged is taken from memory (a copy) instead of read and decoded again.

    The digest of a layer that is a table of a SQLite file (a GeoPackage layer named with
    ``file:layer``) is SHA-256 of the database pages that hold that table, of its schema
    (the table's, its indexes' and triggers'), of the rows of every GeoPackage metadata
    table (``gpkg_…``) that concern it or no table (CRS, columns, extent, feature count,
    extensions), and of the file header but for the counters any write changes, all read
    under a read transaction (no writer can commit meanwhile): an edit of another layer of
    the same file leaves it as it was. Equal pages hold equal rows (a table's rows are in its
    b-tree's pages alone), so a layer taken from memory is the one the file holds. Of any
    other layer: SHA-256 of its files (:func:`source_files`). No digest (the layer is read)
    when a GeoPackage has a write-ahead log or a journal beside it, the layer is not a plain
    table, SQLite cannot list pages (no ``dbstat``), or the files cannot be listed."""

    def __init__(self) -> None:
        self._kept: dict[tuple[str, str], tuple[str, gpd.GeoDataFrame]] = {}

    def digest(self, root: Path, spec: str) -> str | None:
        """The digest of what the layer ``spec`` is read from now (None: read it)."""
        path = layer_file(root, spec)
        layer = spec.rsplit(":", 1)[1] if _has_layer_suffix(spec) else None
        try:
            if layer is not None and path.is_file() and _is_sqlite(path):
                return _table_digest(path, layer)
            files = source_files(root, spec)
            if files is None:
                return None
            h = hashlib.sha256()
            for f in files:
                h.update(os.fsencode(f) + b"\0")
                with open(f, "rb") as fh:
                    h.update(hashlib.file_digest(fh, "sha256").digest())
            return h.hexdigest()
        except OSError:
            return None

    def frame(self, root: Path, spec: str, digest: str) -> gpd.GeoDataFrame | None:
        """A copy of the frame kept for ``spec`` under ``digest``, or None."""
        kept = self._kept.get((str(root), spec))
        return kept[1].copy() if kept is not None and kept[0] == digest else None

    def keep(self, root: Path, spec: str, digest: str, frame: gpd.GeoDataFrame) -> None:
        """Keep a copy of ``frame``, read from ``spec`` whose digest was ``digest``."""
        self._kept[(str(root), spec)] = (digest, frame.copy())


#: bytes of a SQLite file header that any write changes (file change counter, size in
#: pages, free-list pages, schema cookie; version-valid-for and the library version) —
#: https://www.sqlite.org/fileformat.html, 1.3 "The Database Header"
_SQLITE_HEADER_COUNTERS = ((24, 44), (92, 100))


def _sql_name(name: str) -> str:
    """``name`` as an SQL identifier (double-quoted, its quotes doubled)."""
    return '"' + name.replace('"', '""') + '"'


def _is_sqlite(path: Path) -> bool:
    """Whether ``path`` is a file in the SQLite format (a GeoPackage); a folder dataset is not."""
    if not path.is_file():
        return False
    with open(path, "rb") as fh:
        return fh.read(16) == b"SQLite format 3\x00"


def _table_digest(path: Path, table: str) -> str | None:
    """:class:`LayerMemo`'s digest of the table ``table`` of the SQLite file ``path``."""
    if any(path.with_name(path.name + s).exists() for s in ("-wal", "-journal")):
        return None
    try:
        con = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True)
    except sqlite3.Error:
        return None
    try:
        con.execute("BEGIN")
        schema = con.execute(
            "SELECT type, name, tbl_name, sql FROM sqlite_schema WHERE tbl_name = ? "
            "ORDER BY type, name",
            (table,),
        ).fetchall()
        main = [r for r in schema if r[1] == table]
        if len(main) != 1 or main[0][0] != "table" or "VIRTUAL" in str(main[0][3]).upper():
            return None
        h = hashlib.sha256(repr(schema).encode("utf-8"))
        # the GeoPackage's records of this table (and those of no table): CRS, columns,
        # extent, feature count, extensions
        meta = con.execute(
            "SELECT name FROM sqlite_schema WHERE type = 'table' AND name LIKE 'gpkg\\_%' "
            "ESCAPE '\\' ORDER BY name"
        ).fetchall()
        for (name,) in meta:
            quoted = _sql_name(str(name))
            columns = [r[1] for r in con.execute(f"PRAGMA table_info({quoted})")]
            where = (
                ' WHERE "table_name" = ? OR "table_name" IS NULL' if "table_name" in columns else ""
            )
            rows = con.execute(
                f"SELECT * FROM {quoted}{where} ORDER BY rowid", (table,) if where else ()
            ).fetchall()
            h.update(repr((name, rows)).encode("utf-8"))
        size = int(con.execute("PRAGMA page_size").fetchone()[0])
        pages = con.execute(
            "SELECT path, pageno FROM dbstat WHERE name = ? ORDER BY path", (table,)
        ).fetchall()
        with open(path, "rb") as fh:  # the read transaction holds writers off meanwhile
            header = bytearray(fh.read(100))
            for a, b in _SQLITE_HEADER_COUNTERS:
                header[a:b] = bytes(b - a)
            h.update(header)
            for where, page in pages:
                fh.seek((int(page) - 1) * size)
                h.update(f"{where}\0{page}\0".encode())
                h.update(fh.read(size))
        return h.hexdigest()
    except (sqlite3.Error, OSError):
        return None
    finally:
        con.close()


def _short(exc: BaseException) -> str:
    """A reader's error on one line, at most 200 characters, without GDAL's advice to prefix
    the path with a driver name (a layer is named by its file in site.toml)."""
    text = " ".join(str(exc).split())
    text = _DRIVER_ADVICE.sub("", text).rstrip(" ;")
    return text if len(text) <= 200 else text[:197] + "..."


_DRIVER_ADVICE = re.compile(r";?\s*It might help to specify the correct driver explicitly.*$")


#: most files one layer source may consist of before it counts as not listable (a folder
#: dataset of more files is read, but not fingerprinted file by file)
MAX_SOURCE_FILES = 10_000
#: deepest chain of VRT files naming VRT files that is followed
MAX_VRT_DEPTH = 8
#: a data source that is not a local path: a GDAL virtual file system (``/vsizip/…``), a
#: URL, or a connection string (``PG:…``); a one-letter prefix is a Windows drive
_NOT_A_PATH = re.compile(r"^(/vsi|[A-Za-z][A-Za-z0-9+.-]+:)")


def _local(text: str) -> bool:
    """Whether a data source name is a local path (not ``/vsi…``, a URL or a connection)."""
    return not _NOT_A_PATH.match(text) or bool(re.match(r"^[A-Za-z]:[\\/]", text))


def layer_file(root: Path, spec: str) -> Path:
    """The file (or folder dataset) a layer spec of :func:`locate_layers` names."""
    file_part = spec.rsplit(":", 1)[0] if _has_layer_suffix(spec) else spec
    return Path(root) / file_part


def source_files(root: Path, spec: str) -> list[Path] | None:
    """Every file the reader may open for the layer ``spec`` (see :func:`locate_layers`), or
    None when they cannot all be listed.

    - A file brings every file beside it whose name starts with the file's stem and a dot,
      in any case: a Shapefile's ``.shp .shx .dbf .prj .cpg .qix``, a GeoPackage's ``-wal``
      and ``-journal``, a GML file's ``.gfs`` and ``.xsd``, a MapInfo table's side files,
      ``.aux.xml`` files.
    - A folder (a folder dataset, e.g. a folder of Shapefiles) brings every file under it.
    - A GDAL VRT file (``.vrt``) brings, in addition, the files of every data source it
      names (``SrcDataSource``, relative to the VRT where it says so), recursively.

    None when a source is not a local file or folder (a GDAL virtual file system path, a
    URL, a database connection), does not exist, is a VRT that cannot be parsed, or holds
    more than :data:`MAX_SOURCE_FILES` files. The list is sorted and has no duplicates.
    """
    found: set[Path] = set()
    if not _collect(layer_file(root, spec), found, depth=0):
        return None
    return sorted(found)


def _collect(path: Path, found: set[Path], depth: int) -> bool:
    """Add the files of the data source ``path`` to ``found``; False when not listable."""
    if not _local(str(path)):
        return False
    if path.is_dir():
        for base, _dirs, names in os.walk(path):
            found.update(Path(base) / n for n in names)
            if len(found) > MAX_SOURCE_FILES:
                return False
        return True
    if not path.is_file():
        return False
    prefix = path.name.lower().split(".", 1)[0] + "."
    try:
        siblings = [p for p in path.parent.iterdir() if p.name.lower().startswith(prefix)]
    except OSError:
        return False
    found.update(p for p in siblings if p.is_file())
    found.add(path)
    if path.suffix.lower() == ".vrt":
        if depth >= MAX_VRT_DEPTH:
            return False
        sources = _vrt_sources(path)
        if sources is None:
            return False
        for src in sources:
            if src in found and src.suffix.lower() == ".vrt":
                continue  # a VRT already followed
            if not _collect(src, found, depth + 1):
                return False
    return True


def _vrt_sources(path: Path) -> list[Path] | None:
    """The data sources a GDAL VRT file names (``SrcDataSource`` elements), as paths: those
    marked ``relativeToVRT="1"`` relative to the VRT's folder, others as GDAL opens them
    (relative to the working folder). None when the file is not well-formed XML."""
    try:
        tree = ET.parse(path)
    except (ET.ParseError, OSError, ValueError):
        return None
    out = []
    for el in tree.iter("SrcDataSource"):
        text = (el.text or "").strip()
        if not text:
            return None
        if not _local(text):
            return None
        rel = str(el.get("relativeToVRT") or el.get("relativetoVRT") or "0").strip() == "1"
        out.append(path.parent / text if rel else Path(text))
    return out


def site_inputs(root: Path) -> tuple[list[Path], list[str]]:
    """The files a site folder's plan reads, for guarding them (never write over them):
    ``site.toml``, each layer's file or folder dataset and every file of every layer source
    that can be listed; and the layers whose files cannot be listed. Problems in the site are
    left to the reader to report."""
    root = Path(root)
    files = [root / SITE_TOML]
    config, problems = read_config(root)
    if problems:
        return files, []
    try:
        sources, _ = locate_layers(root, config)
    except Exception:  # a broken site is reported by the reader, with its message
        return files, []
    unlisted = []
    for name, spec in sources.items():
        files.append(layer_file(root, spec))  # a file, or a folder dataset
        listed = source_files(root, spec)
        if listed is None:
            unlisted.append(name)
        else:
            files += listed
    return files, unlisted
