"""Chemical formulas of minerals: parsing, molar mass and element mass fractions.

The parser reads the formula notation mineralogists write: nested parentheses or square brackets
with multipliers (``Ca2(Mg,Fe)5``-style sites written with explicit counts), water of hydration
either as a group ``CaSO4(H2O)2`` or after a middle dot ``CaSO4·2H2O``, and fractional site
occupancies such as ``K0.65Al2(Al0.65Si3.35)O10(OH)2``.

Atomic weights are the IUPAC CIAAW standard atomic weights in their abridged (five significant
figure) form, with the conventional single values for the elements whose standard atomic weight is
an interval (H, Li, B, C, N, O, Mg, Si, S, Cl, Br, Tl).

References
----------
.. [1] Prohaska, T., Irrgeher, J., Benefield, J., et al. (2022). Standard atomic weights of the
   elements 2021 (IUPAC Technical Report). *Pure and Applied Chemistry* 94(5), 573-600.
   https://doi.org/10.1515/pac-2019-0603 (Table 2: abridged and conventional values; values
   transcribed from memory of that table and checked against ``molmass`` in the tests).
"""

from __future__ import annotations

import re
from collections.abc import Mapping

from geomet.errors import InputDataError

# IUPAC CIAAW 2021 abridged standard atomic weights [g/mol]; conventional values where the
# standard atomic weight is an interval. Radioactive elements without a standard atomic weight
# (Tc, Pm, Po..Ac, Np and beyond) are left out: no mineral formula geomet handles needs them.
ATOMIC_WEIGHTS_G_MOL: dict[str, float] = {
    "H": 1.0080, "He": 4.0026, "Li": 6.94, "Be": 9.0122, "B": 10.81, "C": 12.011,
    "N": 14.007, "O": 15.999, "F": 18.998, "Ne": 20.180, "Na": 22.990, "Mg": 24.305,
    "Al": 26.982, "Si": 28.085, "P": 30.974, "S": 32.06, "Cl": 35.45, "Ar": 39.95,
    "K": 39.098, "Ca": 40.078, "Sc": 44.956, "Ti": 47.867, "V": 50.942, "Cr": 51.996,
    "Mn": 54.938, "Fe": 55.845, "Co": 58.933, "Ni": 58.693, "Cu": 63.546, "Zn": 65.38,
    "Ga": 69.723, "Ge": 72.630, "As": 74.922, "Se": 78.971, "Br": 79.904, "Kr": 83.798,
    "Rb": 85.468, "Sr": 87.62, "Y": 88.906, "Zr": 91.224, "Nb": 92.906, "Mo": 95.95,
    "Ru": 101.07, "Rh": 102.91, "Pd": 106.42, "Ag": 107.87, "Cd": 112.41, "In": 114.82,
    "Sn": 118.71, "Sb": 121.76, "Te": 127.60, "I": 126.90, "Xe": 131.29, "Cs": 132.91,
    "Ba": 137.33, "La": 138.91, "Ce": 140.12, "Pr": 140.91, "Nd": 144.24, "Sm": 150.36,
    "Eu": 151.96, "Gd": 157.25, "Tb": 158.93, "Dy": 162.50, "Ho": 164.93, "Er": 167.26,
    "Tm": 168.93, "Yb": 173.05, "Lu": 174.97, "Hf": 178.49, "Ta": 180.95, "W": 183.84,
    "Re": 186.21, "Os": 190.23, "Ir": 192.22, "Pt": 195.08, "Au": 196.97, "Hg": 200.59,
    "Tl": 204.38, "Pb": 207.2, "Bi": 208.98, "Th": 232.04, "Pa": 231.04, "U": 238.03,
}  # fmt: skip

_NUMBER = re.compile(r"\d+(?:\.\d+)?|\.\d+")
_ELEMENT = re.compile(r"[A-Z][a-z]?")
_OPEN_TO_CLOSE = {"(": ")", "[": "]"}


def _number(text: str, pos: int) -> tuple[float | None, int]:
    match = _NUMBER.match(text, pos)
    if match is None:
        return None, pos
    return float(match.group()), match.end()


def parse_formula(formula: str) -> dict[str, float]:
    """Count the atoms of each element in a chemical formula.

    Parameters
    ----------
    formula : str
        Formula such as ``"CuFeS2"``, ``"CaSO4(H2O)2"``, ``"CaSO4·2H2O"``,
        ``"(Mg5Al)(AlSi3)O10(OH)8"`` or ``"K0.65Al2(Al0.65Si3.35)O10(OH)2"``. Parentheses and
        square brackets nest; a number after an element or a closing bracket multiplies it; a
        number right after a middle dot (``·``, ``•`` or ``*``) multiplies the unit that follows
        up to the next dot (water of hydration).

    Returns
    -------
    dict[str, float]
        Element symbol -> number of atoms per formula unit [atoms], in order of first appearance.
        Whole counts are returned as floats too (``{"Cu": 1.0, "Fe": 1.0, "S": 2.0}``).

    Raises
    ------
    geomet.errors.InputDataError
        On an empty formula, an unknown element symbol, an unbalanced bracket or a character
        that is not part of formula notation.

    Examples
    --------
    >>> parse_formula("CaSO4(H2O)2")
    {'Ca': 1.0, 'S': 1.0, 'O': 6.0, 'H': 4.0}
    >>> parse_formula("CaSO4·2H2O") == parse_formula("CaSO4(H2O)2")
    True
    """
    if not isinstance(formula, str) or not formula.strip():
        msg = f"a mineral formula must be a non-empty string; got {formula!r}"
        raise InputDataError(msg)
    # Split on hydration dots: "CaSO4·2H2O" -> units "CaSO4" and "2H2O" (leading multiplier).
    units = re.split(r"[·•*]", formula)
    total: dict[str, float] = {}
    for unit in units:
        text = unit.strip()
        if not text:
            msg = f"empty part around a hydration dot in formula {formula!r}"
            raise InputDataError(msg)
        multiplier, start = _number(text, 0)
        counts = _parse_unit(text, start, formula)
        for element, n in counts.items():
            total[element] = total.get(element, 0.0) + n * (multiplier or 1.0)
    return total


def _parse_unit(text: str, pos: int, formula: str) -> dict[str, float]:
    stack: list[tuple[dict[str, float], str]] = [({}, "")]
    while pos < len(text):
        if text[pos].isspace():
            pos += 1
            continue
        char = text[pos]
        element = _ELEMENT.match(text, pos)
        if element is not None:
            symbol = element.group()
            if symbol not in ATOMIC_WEIGHTS_G_MOL:
                msg = (
                    f"unknown element {symbol!r} in formula {formula!r} at position {pos}; "
                    "symbols are case-sensitive, see geomet.minerals.formula.ATOMIC_WEIGHTS_G_MOL"
                )
                raise InputDataError(msg)
            pos = element.end()
            count, pos = _number(text, pos)
            group = stack[-1][0]
            group[symbol] = group.get(symbol, 0.0) + (1.0 if count is None else count)
        elif char in _OPEN_TO_CLOSE:
            stack.append(({}, _OPEN_TO_CLOSE[char]))
            pos += 1
        elif char in ")]":
            if len(stack) == 1 or stack[-1][1] != char:
                msg = f"unbalanced {char!r} in formula {formula!r} at position {pos}"
                raise InputDataError(msg)
            inner, _ = stack.pop()
            pos += 1
            count, pos = _number(text, pos)
            factor = 1.0 if count is None else count
            group = stack[-1][0]
            for symbol, n in inner.items():
                group[symbol] = group.get(symbol, 0.0) + n * factor
        else:
            msg = (
                f"unexpected character {char!r} in formula {formula!r} at position {pos}; "
                "write site mixtures with explicit counts, e.g. (Mg5Al) not (Mg,Fe)"
            )
            raise InputDataError(msg)
    if len(stack) != 1:
        msg = f"unclosed {'(' if stack[-1][1] == ')' else '['!r} in formula {formula!r}"
        raise InputDataError(msg)
    counts = stack[0][0]
    if not counts:
        msg = f"formula {formula!r} names no element"
        raise InputDataError(msg)
    return counts


def _counts(formula: str | Mapping[str, float]) -> dict[str, float]:
    if isinstance(formula, Mapping):
        return dict(formula)
    return parse_formula(formula)


def molar_mass_g_mol(formula: str | Mapping[str, float]) -> float:
    """Molar mass of a formula unit.

    Parameters
    ----------
    formula : str or mapping
        A formula string (see :func:`parse_formula`) or already-parsed element counts [atoms].

    Returns
    -------
    float
        Molar mass [g/mol].

    Notes
    -----
    M = Σ_e n_e A_e, with n_e the atoms of element e per formula unit and A_e its standard atomic
    weight [1]_ (:data:`ATOMIC_WEIGHTS_G_MOL`).

    References
    ----------
    .. [1] Prohaska, T. et al. (2022). Standard atomic weights of the elements 2021 (IUPAC
       Technical Report). *Pure and Applied Chemistry* 94(5), 573-600.
       https://doi.org/10.1515/pac-2019-0603

    Examples
    --------
    >>> round(molar_mass_g_mol("CuFeS2"), 2)
    183.51
    """
    counts = _counts(formula)
    unknown = sorted(set(counts) - set(ATOMIC_WEIGHTS_G_MOL))
    if unknown:
        msg = f"unknown element(s) {unknown} in formula counts {counts!r}"
        raise InputDataError(msg)
    return float(sum(n * ATOMIC_WEIGHTS_G_MOL[e] for e, n in counts.items()))


def element_mass_fractions(formula: str | Mapping[str, float]) -> dict[str, float]:
    """Mass fraction of each element in a formula.

    Parameters
    ----------
    formula : str or mapping
        A formula string (see :func:`parse_formula`) or element counts [atoms].

    Returns
    -------
    dict[str, float]
        Element symbol -> mass fraction [fraction, 0-1]; the values sum to 1.

    Notes
    -----
    w_e = n_e A_e / M, with M from :func:`molar_mass_g_mol`.

    Examples
    --------
    >>> round(element_mass_fractions("FeS2")["S"], 4)
    0.5345
    """
    counts = _counts(formula)
    total = molar_mass_g_mol(counts)
    return {e: n * ATOMIC_WEIGHTS_G_MOL[e] / total for e, n in counts.items()}


def element_pct_per_mineral_pct(formula: str | Mapping[str, float], element: str) -> float:
    """Percent of ``element`` contributed by 1 % of a mineral (its mass fraction, by name).

    Parameters
    ----------
    formula : str or mapping
        Mineral formula or element counts.
    element : str
        Element symbol, e.g. ``"Cu"``.

    Returns
    -------
    float
        Element mass fraction in the mineral [fraction]; 0.0 when the element is absent.
    """
    if element not in ATOMIC_WEIGHTS_G_MOL:
        msg = f"unknown element {element!r}; see geomet.minerals.formula.ATOMIC_WEIGHTS_G_MOL"
        raise InputDataError(msg)
    return element_mass_fractions(formula).get(element, 0.0)
