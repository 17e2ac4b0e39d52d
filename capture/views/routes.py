"""Routes: entries that use other entries' products, and their cumulative PMI and E-factor.

An entry uses an earlier one when its front matter says ``uses: [ID, …]`` or one
of its materials is named like another entry's product. Each step is weighted by
the mass of its product needed per unit mass of the final product, m_i/m_final,
found by walking back from the final step: a step that uses ``u`` g of an
intermediate to make ``p`` g passes ``scale × u / p`` to the step that made it.

    PMI(route) = Σ_i (m_i/m_final) × fresh inputs_i / m_i
    E(route)   = Σ_i (m_i/m_final) × E_i

Step figures add, weighted by mass; they are never multiplied, and an
intermediate is never counted twice (FIELD.md's check: 10 kg → 1 kg, then
1 kg + 9 kg → 1 kg gives PMI 19, not 10 × 10).
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from pydantic import BaseModel, Field

from capture.chem import material_key
from capture.models import Result

if TYPE_CHECKING:
    from capture.notebook import Notebook


class RouteError(ValueError):
    """A route that cannot be worked out; the message says which step and why."""


class RouteStep(BaseModel):
    id: str
    path: str
    product: str | None
    product_g: float
    inputs_g: float
    intermediates_g: float = Field(description="route intermediates among the inputs")
    pmi: float
    e_factor: float
    scale: float = Field(description="g of this step's product per g of the final product")
    pmi_contribution: float
    e_contribution: float
    uses: list[str]
    stale_since: str | None = Field(
        None, description="the entry cannot be read since then: its last good figures are used"
    )


class Route(BaseModel):
    final: str
    steps: list[RouteStep]
    pmi: float
    e_factor: float
    convergent: bool


def _edges(results: dict[str, Result]) -> dict[str, list[tuple[str, float]]]:
    """For each entry: (id of the entry it uses, grams of that product it uses)."""
    by_product = {material_key(r.product.name): rid for rid, r in results.items() if r.product.name}
    edges: dict[str, list[tuple[str, float]]] = {}
    for rid, r in results.items():
        uses = []
        named = set(r.uses)
        for m in r.materials:
            src = by_product.get(material_key(m.resolved or m.name)) or by_product.get(
                material_key(m.name)
            )
            if src and src != rid:
                named.discard(src)
                if m.mass_g is None:
                    raise RouteError(f"{rid}: the intermediate {m.name!r} has no mass")
                uses.append((src, m.mass_g))
        for src in named:
            if src not in results:
                raise RouteError(f"{rid} uses {src!r}, which is not an entry in this notebook")
            prod = results[src].product.name or src
            raise RouteError(
                f"{rid} uses {src}, but lists no material named like its product ({prod!r}); "
                "add it to the materials with the mass used"
            )
        edges[rid] = uses
    return edges


def build_route(results: list[Result], final_id: str, stale: dict[str, str] | None = None) -> Route:
    """The route that ends in ``final_id``, with each step's share of the cumulative figures;
    ``stale``: the ids of steps whose results are their last good ones, with since when."""
    stale = stale or {}
    ok = {r.entry.id: r for r in results if r.status == "ok"}
    if final_id not in ok:
        raise RouteError(f"no readable entry with id {final_id!r}")
    edges = _edges(ok)
    scale: dict[str, float] = {}
    order: list[str] = []

    def visit(rid: str, s: float, path: tuple[str, ...]) -> None:
        if rid in path:
            raise RouteError("the route goes round in a circle: " + " → ".join((*path, rid)))
        r = ok[rid]
        if not r.product.mass_g or not r.totals:
            raise RouteError(f"{rid} has no product mass, so the route cannot be scaled")
        scale[rid] = scale.get(rid, 0.0) + s
        if rid not in order:
            order.append(rid)
        for src, grams in edges[rid]:
            visit(src, s * grams / r.product.mass_g, (*path, rid))

    visit(final_id, 1.0, ())
    steps = []
    for rid in reversed(order):
        r = ok[rid]
        p = r.product.mass_g
        inter = sum(g for _, g in edges[rid])
        pmi = r.totals.inputs_g / p
        e = (r.totals.waste_g if r.totals.waste_g is not None else r.totals.inputs_g - p) / p
        steps.append(
            RouteStep(
                id=rid, path=r.entry.path, product=r.product.name, product_g=p,
                inputs_g=r.totals.inputs_g, intermediates_g=round(inter, 4), pmi=round(pmi, 4),
                e_factor=round(e, 4), scale=round(scale[rid], 6),
                pmi_contribution=round(scale[rid] * (r.totals.inputs_g - inter) / p, 4),
                e_contribution=round(scale[rid] * e, 4), uses=[src for src, _ in edges[rid]],
                stale_since=stale.get(rid),
            )
        )  # fmt: skip
    return Route(
        final=final_id,
        steps=steps,
        pmi=round(sum(s.pmi_contribution for s in steps), 4),
        e_factor=round(sum(s.e_contribution for s in steps), 4),
        convergent=any(len(s.uses) > 1 for s in steps),
    )


def route_for(nb: Notebook, entry: Path) -> Route:
    """The route that ends in the entry file ``entry``, from the notebook's entries computed
    afresh (nothing is written). RouteError when it cannot be worked out."""
    from capture.scan import scan

    results = scan(nb, write=False).results
    results, stale = _last_good(nb, results)
    rel = nb.relpath(entry.resolve())
    final = next((r for r in results if r.entry.path == rel), None)
    if final is None or final.status != "ok":
        raise RouteError(f"{entry} could not be read")
    return build_route(results, final.entry.id, stale)


def _last_good(nb: Notebook, results: list[Result]) -> tuple[list[Result], dict[str, str]]:
    """Each unreadable entry's last good result from the store, where it has one, and the
    ids of those entries with since when they cannot be read."""
    broken = {r.entry.path for r in results if r.status == "error"}
    if not broken or not nb.config.store.enabled:
        return results, {}
    from capture.store import connect, history_for, store_path

    db = store_path(nb.root, nb.config.store.path)[0]
    if not db.exists():
        return results, {}
    conn = connect(db)
    try:
        since = dict(conn.execute("SELECT path, stale_since FROM entries "
                                  "WHERE stale_since IS NOT NULL"))  # fmt: skip
        good: dict[str, Result] = {}
        for path in broken & set(since):
            last = [h["result"] for h in history_for(conn, path) if h["result"]["status"] == "ok"]
            if last:
                good[path] = Result.model_validate(last[-1])
    finally:
        conn.close()
    stale = {r.entry.id: since[path] for path, r in good.items()}
    return [good.get(r.entry.path, r) for r in results], stale
