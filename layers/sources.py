"""Finding and opening a site's files: ``site.toml`` and one file (or GeoPackage layer) per layer.

Opening is kept apart from validation (:mod:`layers.validate`) so that validation can be
tested on in-memory frames.
"""

from __future__ import annotations

import datetime
import difflib
import tomllib
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
            if not (root / file_part).is_file():
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


def _has_layer_suffix(spec: str) -> bool:
    head, sep, tail = spec.rpartition(":")
    return bool(sep) and bool(head) and "/" not in tail and "\\" not in tail and len(head) > 1


def read_layer(root: Path, name: str, spec: str) -> tuple[gpd.GeoDataFrame | None, list[Problem]]:
    """Read one layer with pyogrio; a failure is a problem naming the layer and the file."""
    if _has_layer_suffix(spec):
        file_part, layer = spec.rsplit(":", 1)
    else:
        file_part, layer = spec, None
    path = root / file_part
    try:
        kwargs = {"layer": layer} if layer else {}
        frame = gpd.read_file(path, engine="pyogrio", **kwargs)
    except Exception as exc:  # pyogrio/GDAL raise many types for unreadable files
        return None, [Problem(name, None, f"cannot read {spec}: {_short(exc)}")]
    return frame, []


def _short(exc: BaseException) -> str:
    text = " ".join(str(exc).split())
    return text if len(text) <= 200 else text[:197] + "..."
