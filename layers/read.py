"""Reading a site folder: :func:`read_site`."""

from __future__ import annotations

from pathlib import Path

from .errors import SiteError
from .model import Site
from .sources import LayerMemo, locate_layers, read_config, read_layer
from .validate import build_site


def read_site(path: Path | str, memo: LayerMemo | None = None) -> Site:
    """Read and validate the site folder at ``path``.

    Opens ``site.toml`` and each layer file (any format pyogrio reads), reprojects to one metric
    working CRS and validates everything. Raises :class:`~layers.errors.SiteError` listing every
    problem (file, layer, feature id, what is wrong) — never only the first, except that a
    site.toml missing or unreadable is reported alone (nothing else can be checked without
    its settings and layer names); its ``partial``
    site is set only when every file was read and found and only attributes (or modules) are
    wrong. ``memo``: the layers this process read last (:class:`~layers.sources.LayerMemo`),
    each taken from memory when what it is read from is unchanged.
    """
    root = Path(path)
    config, problems = read_config(root)
    if problems:
        # no settings (site.toml missing or unreadable): whatever else is found would only
        # follow from that (no [modules], a layer mapped in [layers] reported missing)
        raise SiteError(problems)
    sources, p = locate_layers(root, config)
    problems += p
    frames = {}
    for name, spec in sources.items():
        frame, p = read_layer(root, name, spec, memo)
        problems += p
        if frame is not None:
            frames[name] = frame
    try:
        site = build_site(frames, config, root=root, sources=sources)
    except SiteError as exc:
        # a layer already reported missing/unreadable is not reported again, nor a value
        # already reported as stored in the file as another type (what GDAL read of it)
        reported = {p.layer for p in problems}
        values = {(p.layer, p.feature_id, p.attribute) for p in problems if p.attribute}
        later = [
            q
            for q in exc.problems
            if not (
                q.feature_id is None
                and q.layer in reported
                and q.message == "required layer missing"
            )
            and (q.layer, q.feature_id, q.attribute) not in values
        ]
        # the geometry-only checks may run on the partial site only when every file was read
        partial = exc.partial if not problems else None
        raise SiteError(problems + later, partial=partial) from None
    if problems:
        raise SiteError(problems)
    return site
