"""The reactions of a mechanism file: modified Arrhenius rate constants in Cantera's and Chemkin's units.

thermo.yaml (Cantera) and thermo.dat (Chemkin) hold the run's NASA-7 species (export/nasa7.py) and, from
here, its gas-phase reactions (docs/formation.md, "Mechanism"). Cantera's YAML units are m, s, kmol and
J/kmol (cantera.org, "YAML input file reference", units); Chemkin's are cm, s, mol with Ea in the unit named on
the REACTIONS line (Kee, Rupley, Miller, Chemkin-II, Sandia SAND89-8009, 1989).
"""

from __future__ import annotations

import json
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from ..units import HARTREE_J, N_A, R_GAS

#: Chemkin's longest species name (the thermo entry's columns 1-18)
CHEMKIN_NAME_LENGTH = 18


@dataclass(frozen=True)
class ArrheniusReaction:
    """One reversible elementary reaction, k_forward = A T^n exp(-Ea / R T) in Cantera's units.

    Attributes:
        name: the reaction's name in the reaction file.
        reactants, products: (coefficient, species) terms.
        A: (m^3/kmol)^(m-1) s^-1 K^-n, m the reactants' molecularity.
        n: temperature exponent.
        Ea: J/kmol.
        t_min, t_max: the fitted range, K; max_rel_error: the fit's largest |k_fit / k - 1| there.
        temperature, k_forward, k_reverse: the fitted grid (K) and the run's rate constants on it (Cantera's
            units for each side's molecularity), for :func:`reverse_deviation`.
        given: k_forward is the reaction file's constant, not a fit.
    """

    name: str
    reactants: tuple
    products: tuple
    A: float
    n: float
    Ea: float
    t_min: float
    t_max: float
    max_rel_error: float
    temperature: tuple = ()
    k_forward: tuple = ()
    k_reverse: tuple = ()
    given: bool = False

    @property
    def molecularity(self) -> float:
        return sum(c for c, _ in self.reactants)

    def rate(self, temperature):
        """The fitted k_forward, Cantera's units."""
        t = np.asarray(temperature, dtype=float)
        return self.A * t**self.n * np.exp(-self.Ea / (1000.0 * R_GAS * t))


def arrhenius_reaction(name: str, reactants, products, fit, temperature, k_forward, k_reverse,
                       given: bool = False) -> ArrheniusReaction:
    """An :class:`ArrheniusReaction` from a kinetics.ArrheniusFit of k in M^-(m-1) s^-1 (1 mol/L standard
    state). 1 L/mol is 1 m^3/kmol, so A keeps its number; Ea goes from hartree per molecule to J/kmol."""
    if not re.fullmatch(r"(M\^-\d+ )?s\^-1", fit.unit):
        raise ValueError(f"rate constants in {fit.unit!r}: a mechanism needs them in M^-(m-1) s^-1")
    return ArrheniusReaction(name, tuple(reactants), tuple(products), float(fit.A), float(fit.n),
                             float(fit.Ea) * HARTREE_J * N_A * 1000.0, fit.T_min, fit.T_max, fit.max_rel_error,
                             *(tuple(np.asarray(x, dtype=float)) for x in (temperature, k_forward, k_reverse)), given)


def equilibrium_constant(reaction: ArrheniusReaction, fits: Mapping, temperature) -> np.ndarray:
    """K_c = exp(-dG°/RT) (p°/RT)^dn in (kmol/m^3)^dn from the species' NASA-7 data (p° their reference pressure),
    the equilibrium constant from which Cantera computes reverse rate constants of a reversible reaction
    (k_reverse = k_forward / K_c; Kee, Coltrin and Glarborg, Chemically Reacting Flow, 2003, sec. 9.3)."""
    t = np.asarray(temperature, dtype=float)

    def g_rt(terms):
        return sum(c * (fits[n].enthalpy(t) / (R_GAS * t) - fits[n].entropy(t) / R_GAS) for c, n in terms)

    dn = sum(c for c, _ in reaction.products) - reaction.molecularity
    p0 = fits[reaction.reactants[0][1]].reference_pressure
    return np.exp(g_rt(reaction.reactants) - g_rt(reaction.products)) * (p0 / (1000.0 * R_GAS * t)) ** dn


def reverse_ratio(reaction: ArrheniusReaction, fits: Mapping) -> np.ndarray:
    """k_forward / K_c / k_reverse over the fitted grid, with the run's k_forward and k_reverse and the file's K_c
    (:func:`equilibrium_constant`): the reverse rate a kinetics code computes from the file's thermo over the
    run's own, apart from the error of the Arrhenius fit of k_forward."""
    t = np.asarray(reaction.temperature)
    return np.asarray(reaction.k_forward) / equilibrium_constant(reaction, fits, t) / np.asarray(reaction.k_reverse)


def reverse_deviation(reaction: ArrheniusReaction, fits: Mapping) -> float:
    """Largest |:func:`reverse_ratio` - 1|."""
    return float(np.max(np.abs(reverse_ratio(reaction, fits) - 1)))


def _reverse_note(r: ArrheniusReaction, fits: Mapping) -> str:
    """Within a few per cent: the deviation. Beyond: the reaction free energy shift that causes it (R T ln ratio,
    a heat of formation that corrects the computed reaction enthalpy does that)."""
    ratio = reverse_ratio(r, fits)
    deviation = float(np.max(np.abs(ratio - 1)))
    if deviation < 0.05:
        return f"k_forward / K_c within {100 * deviation:.2g} % of the run's k_reverse (before the fit's error)"
    shift = float(np.max(np.abs(R_GAS * np.asarray(r.temperature) * np.log(ratio)))) / 1000.0
    factor = float(np.max(np.maximum(ratio, 1 / ratio)))
    return (f"its reaction free energy differs from the run's by up to {shift:.3g} kJ/mol (heats of formation), "
            f"so k_reverse differs from the run's by a factor of up to {factor:.3g}")


def chemkin_names(names: Sequence[str]) -> dict[str, str]:
    """Full name -> Chemkin name: a name of more than 18 characters becomes its first characters and "_k", the
    smallest k that makes it unique; the others are kept."""
    short: dict[str, str] = {}
    taken = {n for n in names if len(n) <= CHEMKIN_NAME_LENGTH}
    for n in names:
        if len(n) <= CHEMKIN_NAME_LENGTH:
            short[n] = n
            continue
        k = 1
        while (candidate := f"{n[:CHEMKIN_NAME_LENGTH - len(str(k)) - 1]}_{k}") in taken:
            k += 1
        taken.add(candidate)
        short[n] = candidate
    return short


def _side(terms, names: Mapping[str, str] | None = None, sep: str = " + ") -> str:
    names = names or {}
    return sep.join(f"{'' if c == 1 else f'{c:g} '}{names.get(n, n)}" for c, n in terms)


def _duplicates(reactions: Sequence[ArrheniusReaction]) -> set[str]:
    """Names of reactions whose equation (either way round) another one has: kinetics codes need them marked."""
    def key(r):
        a, b = tuple(sorted(r.reactants)), tuple(sorted(r.products))
        return min((a, b), (b, a))

    keys = [key(r) for r in reactions]
    return {r.name for r, k in zip(reactions, keys, strict=True) if keys.count(k) > 1}


def _fit_note(r: ArrheniusReaction, fits: Mapping) -> str:
    forward = "k_forward given in the reaction file" if r.given else \
        (f"modified Arrhenius fit of the run's k(T) over {r.t_min:g}-{r.t_max:g} K, within "
         f"{100 * r.max_rel_error:.2g} %")
    return f"{r.name}: {forward}; reverse from the thermo data: {_reverse_note(r, fits)}"


def yaml_reactions(reactions: Sequence[ArrheniusReaction], fits: Mapping, left_out: Sequence[str]) -> list[str]:
    """The YAML ``reactions:`` section (and comments for the reactions left out); A in (m^3/kmol)^(m-1) s^-1 K^-n,
    Ea in J/kmol, the file's declared units."""
    lines = [f"# {line}" for line in left_out]
    if not reactions:
        return lines
    lines += ["", "reactions:"]
    duplicates = _duplicates(reactions)
    for r in reactions:
        lines.append(f"- equation: {_side(r.reactants)} <=> {_side(r.products)}")
        lines.append(f"  rate-constant: {{A: {r.A!r}, b: {r.n!r}, Ea: {r.Ea!r}}}")
        if r.name in duplicates:
            lines.append("  duplicate: true")
        lines.append(f"  note: {json.dumps(_fit_note(r, fits))}")
    return lines


def chemkin_reactions(reactions: Sequence[ArrheniusReaction], fits: Mapping, names: Mapping[str, str],
                      left_out: Sequence[str]) -> list[str]:
    """The Chemkin REACTIONS block: A in (cm^3/mol)^(m-1) s^-1 K^-n (1 m^3/kmol = 1000 cm^3/mol), Ea in kJ/mol."""
    lines = ["REACTIONS KJOULES/MOLE MOLES",
             "! A in (cm^3/mol)^(m-1) s^-1 K^-n (m: reactant molecularity), Ea in kJ/mol"]
    lines += [f"! {line}" for line in left_out]
    duplicates = _duplicates(reactions)
    for r in reactions:
        a = r.A * 1000.0 ** (r.molecularity - 1)
        equation = f"{_side(r.reactants, names, '+')}<=>{_side(r.products, names, '+')}".replace(" ", "")
        lines += [f"! {_fit_note(r, fits)}", f"{equation:<40s} {a:12.5E} {r.n:9.4f} {r.Ea / 1e6:12.4f}"]
        if r.name in duplicates:
            lines.append("DUPLICATE")
    return [*lines, "END"]
