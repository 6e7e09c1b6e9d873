"""The spec schema's preferences section: topologies, catalogs, stock, costs, Monte Carlo
and the rest (``optimizer.specfile``).
"""

from __future__ import annotations

import math
import os
from pathlib import Path

from yaml.nodes import Node

from ..design import Topology
from ..errors import ModelError
from ..inputs import is_file
from ..spec import (
    MAX_SAMPLES,
    Distribution,
    Objective,
    Preferences,
    StockPolicy,
)
from ..units import (
    parse_resistance,
)
from ..yamlread import (
    Recorded,
    Section,
    expected_form,
    join_names,
    node_line,
    ohms_text,
)
from .base import _SchemaBase
from .keys import (
    MONTE_CARLO_KEYS,
    PREFERENCE_KEYS,
    _path_text,
)


class _PreferencesSchema(_SchemaBase):
    """The preferences section."""

    # -- preferences --------------------------------------------------------------------------

    def topologies(self, node: Node, key: str) -> tuple[Topology, ...]:
        r = self.r
        valid = [t.value for t in Topology]
        items = r.sequence(node, key, f"topologies ({join_names(valid)})")
        if not items:
            r.fail(key, node_line(node), f"expected at least one of {join_names(valid)}")
        read = r.choice(Topology)
        chosen: list[Topology] = []
        for index, item in enumerate(items):
            topology = r.attempt(item, f"{key}[{index}]", read, None)
            if topology is None:
                continue
            if topology in chosen:
                r.problem(f"{key}[{index}]", node_line(item), f"{topology.value!r} is listed twice")
                continue
            chosen.append(topology)
        if not r.ok(key):
            raise Recorded
        return tuple(chosen)

    def catalogs(self, node: Node, key: str) -> tuple[str, ...]:
        """Catalog files, relative to the spec file's folder; each must exist."""
        r = self.r
        items = r.sequence(node, key, "catalog file paths")
        paths: list[str] = []
        for index, item in enumerate(items):
            item_key = f"{key}[{index}]"
            text = r.attempt(item, item_key, r.text, None)
            if text is None:
                continue
            candidate = Path(os.path.expanduser(text))
            resolved = candidate if candidate.is_absolute() else r.folder / candidate
            if not is_file(resolved):
                r.problem(
                    item_key,
                    node_line(item),
                    f"catalog file not found: {_path_text(resolved)} "
                    "(paths are relative to the spec file's folder)",
                )
                continue
            if str(resolved) in paths:
                r.problem(item_key, node_line(item), f"{text!r} is listed twice")
                continue
            paths.append(str(resolved))
        if not r.ok(key):
            raise Recorded
        return tuple(paths)

    def preferences(self, m: Section | None) -> Preferences | None:
        """The preferences section (defaults when absent), or None when a problem was
        recorded.
        """
        r = self.r
        if m is None:
            return Preferences()
        defaults = Preferences()
        topologies = m.opt("topologies", self.topologies, defaults.topologies)
        catalogs = m.opt("catalogs", self.catalogs, defaults.catalogs)
        builtin = m.opt("builtin_catalogs", r.boolean, defaults.use_builtin_catalogs)
        stock = m.opt("stock", r.choice(StockPolicy), defaults.stock)
        cost = r.number("a relative cost of zero or more such as 0.5")
        penalty = self._stock_penalty(m, stock, defaults.stock_penalty)
        alternatives = m.opt(
            "alternatives", r.integer("a whole number from 1 to 1000"), defaults.alternatives
        )
        objective = m.opt("objective", r.choice(Objective), defaults.objective)
        cost_cap = self._cost_cap(m, objective, defaults.cost_cap)
        placement_cost = m.opt("placement_cost", cost, defaults.placement_cost)
        line_cost = m.opt("line_cost", cost, defaults.line_cost)
        same_lot = m.opt("same_lot_tracking", r.boolean, defaults.same_lot_tracking)
        window = m.opt(
            "resistance_range",
            r.pair(r.quantity(parse_resistance), expected_form(parse_resistance), ohms_text),
            (defaults.resistance_min_ohm, defaults.resistance_max_ohm),
        )
        samples, seed, distribution, sigma_k = self._monte_carlo(m, defaults)
        if not r.ok("preferences"):
            return None
        try:
            return Preferences(
                topologies=topologies,
                catalogs=catalogs,
                use_builtin_catalogs=builtin,
                stock=stock,
                stock_penalty=penalty,
                alternatives=alternatives,
                objective=objective,
                cost_cap=cost_cap,
                placement_cost=placement_cost,
                line_cost=line_cost,
                distribution=distribution,
                sigma_k=sigma_k,
                samples=samples,
                seed=seed,
                same_lot_tracking=same_lot,
                resistance_min_ohm=window[0],
                resistance_max_ohm=window[1],
            )
        except ModelError as exc:
            r.model_error(exc, "preferences", _preference_fields())
            return None

    def _stock_penalty(self, m: Section, stock: StockPolicy, default: float) -> float:
        """``stock_penalty``: required with ``stock: prefer``, refused otherwise."""
        r = self.r
        if stock is StockPolicy.PREFER:
            return m.need(
                "stock_penalty",
                r.number("a relative cost of zero or more such as 0.5"),
                "a relative cost of zero or more such as 0.5 (required with stock: prefer)",
                math.nan,
            )
        if m.has("stock_penalty") and r.ok("preferences.stock"):
            r.problem(
                "preferences.stock_penalty",
                m.line_of("stock_penalty"),
                "only used with stock: prefer; set stock: prefer or remove this key",
            )
        return default

    def _cost_cap(self, m: Section, objective: Objective, default: float | None) -> float | None:
        """``cost_cap``: only with the CMRR-margin objective."""
        r = self.r
        if (
            m.has("cost_cap")
            and r.ok("preferences.objective")
            and objective is not Objective.CMRR_MARGIN
        ):
            r.problem(
                "preferences.cost_cap",
                m.line_of("cost_cap"),
                f"only used with objective: {Objective.CMRR_MARGIN.value}; "
                "change the objective or remove this key",
            )
            return default
        return m.opt("cost_cap", r.number("a relative cost above zero such as 5"), default)

    def _monte_carlo(
        self, m: Section, defaults: Preferences
    ) -> tuple[int, int, Distribution, float]:
        """The ``monte_carlo`` subsection: samples, seed, distribution and ``sigma_k`` (only
        with the normal distribution).
        """
        r = self.r
        samples, seed, distribution, sigma_k = (
            defaults.samples,
            defaults.seed,
            defaults.distribution,
            defaults.sigma_k,
        )
        mc = r.section(m, "monte_carlo", MONTE_CARLO_KEYS)
        if mc is None:
            return samples, seed, distribution, sigma_k
        samples = mc.opt(
            "samples", r.integer(f"a whole number from 100 to {MAX_SAMPLES:,}"), samples
        )
        seed = mc.opt("seed", r.integer("a whole number of zero or more"), seed)
        distribution = mc.opt("distribution", r.choice(Distribution), distribution)
        if (
            mc.has("sigma_k")
            and r.ok("preferences.monte_carlo.distribution")
            and distribution is not Distribution.NORMAL
        ):
            r.problem(
                "preferences.monte_carlo.sigma_k",
                mc.line_of("sigma_k"),
                "only used with distribution: normal "
                "(the tolerance spans sigma_k standard deviations); remove this key",
            )
        else:
            sigma_k = mc.opt("sigma_k", r.number("a number above zero such as 3"), sigma_k)
        return samples, seed, distribution, sigma_k


def _preference_fields() -> dict[str, str]:
    """Where each field a :class:`Preferences` refuses comes from in the spec file."""
    fields = {name: f"preferences.{name}" for name in PREFERENCE_KEYS}
    fields.update({name: f"preferences.monte_carlo.{name}" for name in MONTE_CARLO_KEYS})
    fields["resistance_range min"] = "preferences.resistance_range.min"
    fields["resistance_range max"] = "preferences.resistance_range.max"
    return fields
