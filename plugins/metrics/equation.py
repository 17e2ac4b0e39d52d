"""Reaction equations: parsing, atom balance and the reaction metrics they allow.

An ``equation:`` is written with formulas or names and optional coefficients,
``3 C9H10O + 2 CrO3 + 3 H2SO4 -> 3 C8H8O + Cr2(SO4)3 + 6 H2O`` or
``4-bromoanisole + phenylboronic acid -> 4-methoxybiphenyl``; the arrow may be
``->``, ``→``, ``=>`` or `` = `` (with spaces). SMILES terms are read through
RDKit when it is installed. A term that reads as a formula is one; any other
term is a name, resolved to a formula through the material knowledge. The
desired product is the right-hand term that matches the entry's product (by name
or formula), else the first.

Definitions (each with its source):

- atom economy = MW(product) / Σ coefficient × MW(reactants) (Trost, Science 1991,
  254, 1471);
- reaction mass efficiency RME = m(product) / Σ m(reactants), carbon efficiency =
  (mol product × C in product) / Σ (mol reactant × C in reactant), mass intensity =
  total mass without water / m(product) (Constable, Curzons & Cunningham, Green
  Chem. 2002, 4, 521);
- Andraos' factorisation RME = yield × AE × (1/SF) × MRP, with SF = Σ m(reactants
  used) / Σ m(stoichiometric reactants) and MRP = 1 / [1 + yield·AE·(c + s + ω) /
  (SF·m(product))], c, s, ω being the unrecovered catalyst, reaction solvent and
  workup/purification masses (Andraos, Org. Process Res. Dev. 2005, 9, 149).
"""

from __future__ import annotations

import functools
import re
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass
from types import MappingProxyType

from capture.chem import formula_from_smiles, material_key, molar_mass
from capture.models import ReactionFigures

_ARROW = re.compile(r"\s*(?:->|→|=>|⟶)\s*|\s+=\s+")  # a bare "=" only with spaces: SMILES use it
_TERM = re.compile(r"^\s*(?:(?P<coef>\d+(?:\.\d+)?|½|1/2)\s+)?(?P<what>.+?)\s*$")
_FORMULA_LIKE = re.compile(r"^(?:[A-Z][a-z]?\d*|\(|\)\d*|\[|\]\d*|[·.]\d*)+$")


_SMILES_LIKE = re.compile(r"[=#@\\/]|c1|n1|\(=O\)|^[BCNOPSFIcnops\[][\w\[\]()=#@+\-\\/]*$")


class EquationError(ValueError):
    """An equation that cannot be used, with the reason."""


@dataclass
class Term:
    coefficient: float
    written: str
    formula: str
    molar_mass: float


@functools.lru_cache(maxsize=4096)
def _composition(formula: str) -> MappingProxyType:
    """Atoms per element of a formula (read-only: the answer is cached and shared)."""
    import molmass

    comp = molmass.Formula(formula).composition()
    return MappingProxyType({sym: item.count for sym, item in comp.items()})


def _term(text: str, resolve: Callable[[str], object]) -> Term:
    m = _TERM.match(text)
    if not m or not m.group("what"):
        raise EquationError(f"cannot read the term {text!r}")
    coef_text = m.group("coef") or "1"
    coef = 0.5 if coef_text in {"½", "1/2"} else float(coef_text)
    what = m.group("what").strip()
    formula = None
    if _FORMULA_LIKE.match(what):
        try:
            molar_mass(what)
            formula = what
        except ValueError:
            formula = None
    if formula is None and _SMILES_LIKE.search(what):
        formula = formula_from_smiles(what)
    if formula is None:
        info = resolve(what)
        formula = getattr(info, "formula", None)
        if not formula:
            raise EquationError(
                f"{what!r} is neither a formula nor a name with a known formula; write its "
                "formula in the equation"
            )
    return Term(coef, what, formula, molar_mass(formula))


@dataclass
class Equation:
    reactants: list[Term]
    products: list[Term]

    @classmethod
    def parse(cls, text: str, resolve: Callable[[str], object]) -> Equation:
        sides = _ARROW.split(text.strip())
        if len(sides) != 2 or not all(s.strip() for s in sides):
            raise EquationError("an equation needs one arrow (->) between reactants and products")
        left, right = ([_term(t, resolve) for t in re.split(r"\s+\+\s+", side)] for side in sides)
        return cls(left, right)

    def imbalance(self) -> dict[str, float]:
        """Atoms left minus atoms right, per element; empty when balanced."""
        left: Counter = Counter()
        right: Counter = Counter()
        for side, terms in ((left, self.reactants), (right, self.products)):
            for t in terms:
                for el, n in _composition(t.formula).items():
                    side[el] += n * t.coefficient
        return {el: round(left[el] - right[el], 6) for el in sorted(set(left) | set(right))
                if abs(left[el] - right[el]) > 1e-9}  # fmt: skip

    def desired(self, name: str | None, formula: str | None) -> Term:
        """The product term that is the entry's product, else the first one."""
        for t in self.products:
            if formula and t.formula.replace(" ", "") == formula.replace(" ", ""):
                return t
            if name and material_key(t.written) == material_key(name):
                return t
        return self.products[0]


def atom_economy(
    product_mw: float, reactants: list[tuple[float, float]], product_coef: float = 1.0
) -> float:
    """Trost's atom economy: coefficient × MW of the product ÷ Σ coefficient × MW of reactants."""
    return product_coef * product_mw / sum(c * mw for c, mw in reactants)


def andraos(
    yield_: float, ae: float, sf: float, product_g: float, auxiliaries_g: float
) -> tuple[float, float]:
    """(MRP, RME) of Andraos' factorisation RME = yield × AE × (1/SF) × MRP.

    ``auxiliaries_g`` is c + s + ω: the unrecovered catalyst, reaction solvent and
    workup/purification masses.
    """
    mrp = 1 / (1 + yield_ * ae * auxiliaries_g / (sf * product_g))
    return mrp, yield_ * ae / sf * mrp


def carbons(formula: str) -> float:
    """Number of carbon atoms in a formula."""
    return float(_composition(formula).get("C", 0))


def describe_imbalance(imbalance: dict[str, float]) -> str:
    """'2 O more on the left, 1 H more on the right'."""
    parts = []
    for el, d in imbalance.items():
        side = "left" if d > 0 else "right"
        parts.append(f"{abs(d):g} {el} more on the {side}")
    return ", ".join(parts)


def reaction_figures(equation_text: str, materials, product, resolve) -> ReactionFigures:
    """Parse the equation, check its atom balance, and match its reactants to the entry's lines.

    Raises EquationError (a ValueError) for an equation that cannot be read or does not
    balance.
    """

    def resolve_term(name: str):
        for m in materials:
            if m.formula and material_key(m.name) == material_key(name):
                return m
        return resolve(name)

    eq = Equation.parse(equation_text, resolve_term)
    off = eq.imbalance()
    if off:
        raise EquationError(f"the equation does not balance: {describe_imbalance(off)}")
    desired = eq.desired(product.name, getattr(product, "formula", None))
    fig = ReactionFigures(
        equation=equation_text, product_term=desired.written, product_formula=desired.formula,
        product_molar_mass=desired.molar_mass,
        atom_economy=atom_economy(desired.molar_mass,
                                  [(t.coefficient, t.molar_mass) for t in eq.reactants],
                                  desired.coefficient),
    )  # fmt: skip
    matched = []
    for t in eq.reactants:
        line = next(
            (m for m in materials
             if (m.formula and m.formula.replace(" ", "") == t.formula)
             or material_key(m.name) == material_key(t.written)
             or (m.resolved and material_key(m.resolved) == material_key(t.written))),
            None,
        )  # fmt: skip
        matched.append((t, line))
    fig.reactants = [line.name for _, line in matched if line is not None]
    with_moles = [(t, m) for t, m in matched if m is not None and m.moles_mmol]
    if with_moles:
        t, m = min(with_moles, key=lambda tm: tm[1].moles_mmol / tm[0].coefficient)
        fig.limiting = m.name
        fig.limiting_mmol_per_coef = m.moles_mmol / t.coefficient
        fig.theoretical_yield_g = (
            fig.limiting_mmol_per_coef * desired.coefficient * desired.molar_mass / 1000
        )
        if product.mass_g is not None and fig.theoretical_yield_g > 0:
            fig.yield_ = product.mass_g / fig.theoretical_yield_g
    masses = [m.mass_g for _, m in matched if m is not None and m.mass_g is not None]
    if len(masses) == len(matched):
        fig.reactant_mass_g = sum(masses)
        if fig.limiting_mmol_per_coef is not None:
            fig.stoichiometric_mass_g = sum(
                fig.limiting_mmol_per_coef * t.coefficient * t.molar_mass / 1000
                for t in eq.reactants
            )
    if product.mass_g is not None and len(with_moles) == len(matched):
        c_in = sum(m.moles_mmol * carbons(t.formula) for t, m in with_moles)
        c_out = product.mass_g / desired.molar_mass * 1000 * carbons(desired.formula)
        fig.carbon_efficiency = c_out / c_in if c_in else None
    return fig
