"""What the waste is: streams for disposal, and solvent waste by CHEM21 rank (plugin ``waste``).

``masstrail_waste_stream`` gives each input line its stream; ``masstrail_compute_metrics``
adds up the streams and the solvent ranks.

Streams (after Prudent Practices in the Laboratory, NRC 2011, ch. 8, and the
US EPA spent-solvent listings), assigned to each input in this order:

1. ``reactive``: reactive or pyrophoric materials (NaH, LiAlH4, organolithiums),
   flagged and never classified further: quench them first;
2. ``metal-bearing``: a formula with a metal of ``[waste_streams] metals``
   (Pd, Pt, Cu, Ni, …), or a supported metal catalyst (Pd/C, Pt/C);
3. ``solid``: drying agents, sorbents (silica, alumina), filter aids and media;
4. ``halogenated organic``: halogenated solvents and organic compounds;
5. ``aqueous``: water, aqueous solutions, and inorganic compounds without carbon;
6. ``non-halogenated organic``: the rest.

``[waste_streams] assign`` puts a named material in a stream of the lab's choice.
The product leaves the streams of the reaction-stage reactants in proportion to
their masses, and recovered material leaves its own stream: this tool's
convention, since a notebook does not say where each atom went.

The hazard-weighted E-factor weighs each solvent's waste by its CHEM21 rank
(Prat et al., Green Chem. 2016, 18, 288) with ``[hazard_weights]`` (default 1, 2,
5, 10 for recommended … highly hazardous, 1 for everything else), in the spirit
of Sheldon's environmental quotient EQ = E × Q (CHEMTECH 1994). These weights are
this tool's convention, not published values, and the figure is a screening aid,
not a risk assessment: the safety data sheets, local regulations and the lab's
safety office decide how waste is handled.
"""

from __future__ import annotations

import re

from capture.chem import material_key
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import MaterialLine, MetricsReport, ProductOut, WasteProfile

RANKS = ("recommended", "problematic", "hazardous", "highly hazardous")
UNRANKED = "not ranked in the guide"  # a solvent the CHEM21 guide does not rank, or not known
_ELEMENT = re.compile(r"[A-Z][a-z]?")
_SUPPORTED_METAL = re.compile(r"\b(Pd|Pt|Rh|Ru|Ni)\s*/\s*C\b|palladium|platinum|rhodium", re.I)
RULE = ("reactive, then metal-bearing, then solid media, then halogenated organic, then aqueous "
        "(water and inorganics), then non-halogenated organic; the product leaves the reactants' "
        "streams in proportion, recovered material its own (masstrail's convention)")  # fmt: skip


@hookimpl(trylast=True, specname="masstrail_waste_stream")
def stream_of(line: MaterialLine, config: LabConfig) -> str:
    """The waste stream of one input, by the rule above."""
    for name, stream in config.waste_streams.assign.items():
        if material_key(name) in {material_key(line.name), material_key(line.resolved or "")}:
            return stream
    # the chloride of a hydrochloride salt (EDC·HCl) is ionic: not a halogenated organic
    formula = re.sub(r"[.·]H(?:Cl|Br|I)$", "", line.formula or "")
    elements = set(_ELEMENT.findall(formula))
    if line.reactive:
        return "reactive"
    if elements & set(config.waste_streams.metals) or _SUPPORTED_METAL.search(
        f"{line.name} {line.resolved or ''}"
    ):
        return "metal-bearing"
    if line.category in {"drying agent", "sorbent", "filter aid", "filter medium"}:
        return "solid"
    if line.halogenated or ("C" in elements and elements & {"F", "Cl", "Br", "I"}):
        return "halogenated organic"
    # carbonates and bicarbonates carry carbon but are inorganic salts
    organic_c = "C" in set(_ELEMENT.findall(re.sub(r"H?CO3", "", formula)))
    if line.category in {"water", "aqueous"} or (line.formula and not organic_c):
        return "aqueous"
    return "non-halogenated organic"


def _r(x: float) -> float:
    return round(x, 4)


@hookimpl(specname="masstrail_compute_metrics")
def waste_profile(
    materials: list[MaterialLine],
    product: ProductOut,
    recovered: list[MaterialLine],
    config: LabConfig,
) -> MetricsReport | None:
    """Stream totals, solvent waste by CHEM21 rank, and the hazard-weighted E-factor."""
    weighed = [m for m in materials if m.mass_g is not None]
    if not weighed:
        return None
    waste = {id(m): m.mass_g for m in weighed}
    # the product leaves the reactants; recovered material leaves its own lines
    # the catalyst is not consumed: the product comes out of the other reaction inputs
    reactants = [
        m
        for m in weighed
        if m.stage == "reaction"
        and m.category not in {"solvent", "water", "aqueous", "catalyst"}
        and (m.role or "").casefold() != "catalyst"
    ]
    if product.mass_g and reactants:
        total = sum(m.mass_g for m in reactants)
        for m in reactants:
            waste[id(m)] -= product.mass_g * m.mass_g / total
    for rec in recovered:
        if rec.mass_g is None:
            continue
        key = material_key(rec.resolved or rec.name)
        same = [m for m in weighed if material_key(m.resolved or m.name) == key]
        left = rec.mass_g
        for m in same:
            take = min(left, waste[id(m)])
            waste[id(m)] -= take
            left -= take
    streams: dict[str, float] = {}
    ranks: dict[str, float] = {}
    weights = config.hazard_weights
    weight_of = {
        "recommended": weights.recommended,
        "problematic": weights.problematic,
        "hazardous": weights.hazardous,
        "highly hazardous": weights.highly_hazardous,
    }
    weighted = 0.0
    for m in weighed:
        w = max(waste[id(m)], 0.0)
        s = m.stream or stream_of(m, config)  # set by masstrail_waste_stream
        streams[s] = streams.get(s, 0.0) + w
        if m.category in {"solvent", "water"}:
            rank = m.chem21 if m.chem21 in RANKS else UNRANKED
            ranks[rank] = ranks.get(rank, 0.0) + w
        weighted += w * weight_of.get(m.chem21 or "", weights.other)
    total_waste = sum(streams.values())
    summary = None
    if total_waste > 0 and ranks:
        parts = [f"{ranks[r] / total_waste:.0%} of the waste is solvent "
                 + (r if r == UNRANKED else f"ranked {r}")
                 for r in (*reversed(RANKS), UNRANKED) if ranks.get(r)]  # fmt: skip
        summary = "; ".join(parts) + " (CHEM21, Prat et al. 2016; ranks as recalled, to verify)"
    metrics = {}
    if product.mass_g:
        metrics["hazard_weighted_e"] = _r(weighted / product.mass_g)
    return MetricsReport(
        metrics=metrics,
        waste=WasteProfile(
            streams={k: _r(v) for k, v in sorted(streams.items())},
            solvent_ranks={k: _r(v) for k, v in sorted(ranks.items())},
            summary=summary,
            rule=RULE,
        ),
        context={
            "hazard": "The stream split and the hazard-weighted figure are a screening aid, not "
            "a risk assessment; the rank weights are masstrail's convention. Follow the safety "
            "data sheets, local regulations and your lab's safety office."
        },
    )
