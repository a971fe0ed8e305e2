"""``routeplan check``: read and validate a site, then summarise what will be planned.

The library never prints; :func:`check_site` returns a :class:`CheckReport` that the CLI
renders, or raises :class:`layers.SiteError` listing every problem.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import pandas as pd
import shapely

import layers
from layers import Problem, Site, SiteError
from layers.sources import LayerMemo

from .config import DesignConfig, parse_design
from .errors import RoutingError


@dataclass(frozen=True)
class CheckReport:
    """What ``check`` found: the site, its design settings and summary figures (SI)."""

    site: Site
    design: DesignConfig
    counts: dict[str, int]
    strings: int
    trench_m: float
    dc_kw: float
    ac_kva: float
    assignment: pd.DataFrame | None = None

    def assigned(self) -> pd.DataFrame:
        """Features whose destination the planner chose (their ``to`` was empty)."""
        a = self.assignment
        if a is None or a.empty:
            return pd.DataFrame(columns=["layer", "feature_id", "to_id", "rule", "route_m"])
        return a[a["rule"] != "given"]


def load(path: Path | str, memo: LayerMemo | None = None) -> tuple[Site, DesignConfig]:
    """Read the site and its design settings; raise :class:`SiteError` with every problem.

    When the layers or the settings have problems but the layers' geometry is sound (the
    site, or :attr:`SiteError.partial` when only attributes are wrong), the network checks
    that need the geometry alone run too (:func:`routeplan.routing.geometry_problems`:
    overlapping trenches, far equipment), so one run reports everything. ``memo``: the layers
    this process read last (:class:`layers.sources.LayerMemo`).
    """
    problems: list[Problem] = []
    site: Site | None = None
    partial: Site | None = None
    try:
        site = layers.read_site(path, memo)
    except SiteError as exc:
        problems += exc.problems
        partial = exc.partial
    known = site if site is not None else partial
    config = known.config if known is not None else _config_only(Path(path))
    design, p = parse_design(config)
    problems += p
    if problems or site is None:
        if known is not None:
            problems += _geometry_problems(known, design, p)
        raise SiteError(problems)
    return site, design


#: design settings the network checks depend on
_NETWORK_KEYS = frozenset({"design.snap_m", "design.node_tol_m"})


def _geometry_problems(site: Site, design: DesignConfig, refused: list[Problem]) -> list[Problem]:
    """:func:`routeplan.routing.geometry_problems` of a site that has other problems, with
    the design's tolerances; none when a tolerance itself was refused (its problem is
    reported, and checks with another tolerance would mislead)."""
    from .pipeline import route_params
    from .routing import geometry_problems

    if any(p.feature_id in _NETWORK_KEYS for p in refused):
        return []
    try:
        params = route_params(design)
    except RoutingError as exc:
        return exc.problems
    return geometry_problems(site, params)


def _config_only(root: Path) -> dict:
    from layers.sources import read_config

    config, _ = read_config(root)
    return config


def check_site(path: Path | str) -> CheckReport:
    """Validate the site at ``path``: files, geometry, attributes, design settings, the
    trench network (trenches drawn twice or running back over themselves, far parts of a
    trench, far equipment, islands, unreachable destinations, assignment), and whatever the
    plan itself refuses (inverter inputs, settings the rule set cannot apply): the site is
    routed and sized, nothing is written.

    Raises :class:`layers.SiteError` or :class:`routeplan.errors.RoutingError` with every
    problem found.
    """
    from .pipeline import plan_site, route_params
    from .routing import assignment_check

    site, design = load(path)
    problems, assignment = assignment_check(site, route_params(design))
    if problems:
        raise RoutingError(problems)
    # what only the plan itself can refuse (inverter inputs, settings the rule set cannot
    # apply): plan without writing, so that a site check passes is a site plan accepts
    plan_site(site, design)
    counts = {name: len(site.layer(name)) for name in layers.LAYER_NAMES}
    strings = int(site.rows["strings"].sum())
    per_string_kw = {
        k: m.per_string * m.extra.get("pmax_w", m.imp_a * m.vmp_v) / 1000.0
        for k, m in site.modules.items()
    }
    dc_kw = float(
        sum(
            per_string_kw[m] * n
            for m, n in zip(site.rows["module"], site.rows["strings"], strict=True)
        )
    )
    trench_m = float(shapely.length(site.trenches.geometry.values).sum())
    return CheckReport(
        site=site,
        design=design,
        counts=counts,
        strings=strings,
        trench_m=trench_m,
        dc_kw=dc_kw,
        ac_kva=float(site.inverters["ac_kva"].sum()),
        assignment=assignment,
    )
