"""Chemistry for purity assays: SI constants, atomic weights, molar masses, moist air.

Sources:

* Defining constants of the SI (2019 revision, BIPM SI Brochure 9th ed., Table 1): exact.
* Standard atomic weights 2021: T. Prohaska et al., "Standard atomic weights of the
  elements 2021 (IUPAC Technical Report)", Pure Appl. Chem. 94 (2022) 573, and the
  abridged (five-significant-digit) table of the same report. Every entry of ``_TABLE``
  was checked against a public transcription of that Table 1 (repository
  MilanSkocic/ciaaw, file data/src/saw_2021.txt), with two exceptions marked ``M``
  (from memory): the transcription gives tin as 118.70(7), a value whose uncertainty
  sits below its last digit, where the IUPAC value is 118.710(7); and it gives the
  abridged beryllium as 9.0122 ± 0.00001, below the value's last digit, where ± 0.0001
  is taken.
* Moist-air density: A. Picard, R. S. Davis, M. Gläser, K. Fujii, "Revised formula for the
  density of moist air (CIPM-2007)", Metrologia 45 (2008) 149.

Method for molar masses (EURACHEM/CITAC Guide, Appendix A2 and common practice): the
tabulated uncertainty of an atomic weight is taken as the half-width of a rectangular
distribution; the n atoms of one element in a formula are fully correlated, so
u(M)² = Σ_E (n_E·u(A_E))². Every element is drawn from its own rectangular distribution
in the Monte Carlo simulation.

This module is a leaf: it imports nothing from the engine but the error types.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Any, Callable

from ._errors import InputError, Location

__all__ = [
    "CONSTANTS", "CONVENTIONS", "DEFAULT_CONVENTION", "AtomicWeight", "MolarMass",
    "atomic_weight", "parse_formula", "molar_mass", "air_density_expression",
    "air_density",
]

# name: (value, unit, description); exact by definition since 20 May 2019 (SI Brochure).
_E = 1.602176634e-19
_NA = 6.02214076e23
_KB = 1.380649e-23
CONSTANTS: dict[str, tuple[float, str, str]] = {
    "e": (_E, "C", "elementary charge (SI 2019, exact)"),
    "N_A": (_NA, "1/mol", "Avogadro constant (SI 2019, exact)"),
    "k_B": (_KB, "J/K", "Boltzmann constant (SI 2019, exact)"),
    "h": (6.62607015e-34, "J*s", "Planck constant (SI 2019, exact)"),
    "c": (299792458.0, "m/s", "speed of light in vacuum (SI 2019, exact)"),
    "F": (_E * _NA, "C/mol", "Faraday constant F = e·N_A (SI 2019, exact)"),
    "R": (_NA * _KB, "J/(mol*K)", "molar gas constant R = N_A·k_B (SI 2019, exact)"),
}

CONVENTIONS = ("iupac-2021-interval", "iupac-2021-abridged")
DEFAULT_CONVENTION = CONVENTIONS[0]

# symbol, standard atomic weight ("[a,b]" interval or "value(U)"), abridged "value(U)",
# and M where the entry is from memory (see the module docstring).
_TABLE = """
H [1.00784,1.00811] 1.0080(2) | He 4.002602(2) 4.0026(1) | Li [6.938,6.997] 6.94(6)
Be 9.0121831(5) 9.0122(1) M | B [10.806,10.821] 10.81(2) | C [12.0096,12.0116] 12.011(2)
N [14.00643,14.00728] 14.007(1) | O [15.99903,15.99977] 15.999(1)
F 18.998403162(5) 18.998(1) | Ne 20.1797(6) 20.180(1) | Na 22.98976928(2) 22.990(1)
Mg [24.304,24.307] 24.305(2) | Al 26.9815384(3) 26.982(1) | Si [28.084,28.086] 28.085(1)
P 30.973761998(5) 30.974(1) | S [32.059,32.076] 32.06(2) | Cl [35.446,35.457] 35.45(1)
Ar [39.792,39.963] 39.95(16) | K 39.0983(1) 39.098(1) | Ca 40.078(4) 40.078(4)
Sc 44.955907(4) 44.956(1) | Ti 47.867(1) 47.867(1) | V 50.9415(1) 50.942(1)
Cr 51.9961(6) 51.996(1) | Mn 54.938043(2) 54.938(1) | Fe 55.845(2) 55.845(2)
Co 58.933194(3) 58.933(1) | Ni 58.6934(4) 58.693(1) | Cu 63.546(3) 63.546(3)
Zn 65.38(2) 65.38(2) | Ga 69.723(1) 69.723(1) | Ge 72.630(8) 72.630(8)
As 74.921595(6) 74.922(1) | Se 78.971(8) 78.971(8) | Br [79.901,79.907] 79.904(3)
Kr 83.798(2) 83.798(2) | Rb 85.4678(3) 85.468(1) | Sr 87.62(1) 87.62(1)
Y 88.905838(2) 88.906(1) | Zr 91.224(2) 91.224(2) | Nb 92.90637(1) 92.906(1)
Mo 95.95(1) 95.95(1) | Ru 101.07(2) 101.07(2) | Rh 102.90549(2) 102.91(1)
Pd 106.42(1) 106.42(1) | Ag 107.8682(2) 107.87(1) | Cd 112.414(4) 112.41(1)
In 114.818(1) 114.82(1) | Sn 118.710(7) 118.71(1) M | Sb 121.760(1) 121.76(1)
Te 127.60(3) 127.60(3) | I 126.90447(3) 126.90(1) | Xe 131.293(6) 131.29(1)
Cs 132.90545196(6) 132.91(1) | Ba 137.327(7) 137.33(1) | La 138.90547(7) 138.91(1)
Ce 140.116(1) 140.12(1) | Pr 140.90766(1) 140.91(1) | Nd 144.242(3) 144.24(1)
Sm 150.36(2) 150.36(2) | Eu 151.964(1) 151.96(1) | Gd 157.25(3) 157.25(3)
Tb 158.925354(7) 158.93(1) | Dy 162.500(1) 162.50(1) | Ho 164.930329(5) 164.93(1)
Er 167.259(3) 167.26(1) | Tm 168.934219(5) 168.93(1) | Yb 173.045(10) 173.05(2)
Lu 174.9668(1) 174.97(1) | Hf 178.486(6) 178.49(1) | Ta 180.94788(2) 180.95(1)
W 183.84(1) 183.84(1) | Re 186.207(1) 186.21(1) | Os 190.23(3) 190.23(3)
Ir 192.217(2) 192.22(1) | Pt 195.084(9) 195.08(2) | Au 196.966570(4) 196.97(1)
Hg 200.592(3) 200.59(1) | Tl [204.382,204.385] 204.38(1) | Pb [206.14,207.94] 207.2(1.1)
Bi 208.98040(1) 208.98(1) | Th 232.0377(4) 232.04(1) | Pa 231.03588(1) 231.04(1)
U 238.02891(3) 238.03(1)
"""
# Elements of the periodic table that have no standard atomic weight (no stable isotope
# with a characteristic terrestrial isotopic composition).
_NO_WEIGHT = ("Tc Pm Po At Rn Fr Ra Ac Np Pu Am Cm Bk Cf Es Fm Md No Lr Rf Db Sg Bh Hs Mt "
              "Ds Rg Cn Nh Fl Mc Lv Ts Og").split()


@dataclass(frozen=True, slots=True)
class AtomicWeight:
    """An element's atomic weight as a rectangular distribution: centre ± half_width."""

    symbol: str
    estimate: float
    half_width: float
    checked: bool

    @property
    def standard_uncertainty(self) -> float:
        return self.half_width / math.sqrt(3.0)


def _weight(symbol: str, text: str, checked: bool) -> AtomicWeight:
    if text.startswith("["):
        low, high = (float(x) for x in text.strip("[]").split(","))
        return AtomicWeight(symbol, (low + high) / 2, (high - low) / 2, checked)
    value, unc = re.fullmatch(r"([\d.]+)\(([\d.]+)\)", text).groups()  # type: ignore[union-attr]
    decimals = len(value.split(".")[1]) if "." in value else 0
    half = float(unc) if "." in unc else int(unc) * 10.0 ** -decimals
    return AtomicWeight(symbol, float(value), half, checked)


def _load_table() -> dict[str, dict[str, AtomicWeight]]:
    tables: dict[str, dict[str, AtomicWeight]] = {name: {} for name in CONVENTIONS}
    for entry in _TABLE.replace("\n", "|").split("|"):
        fields = entry.split()
        if not fields:
            continue
        symbol, standard, abridged, *memory = fields
        checked = not memory
        tables[CONVENTIONS[0]][symbol] = _weight(symbol, standard, checked)
        tables[CONVENTIONS[1]][symbol] = _weight(symbol, abridged, checked)
    return tables


_WEIGHTS = _load_table()


def atomic_weight(symbol: str, convention: str = DEFAULT_CONVENTION) -> AtomicWeight:
    """The atomic weight of one element under a convention; KeyError when it has none."""
    return _WEIGHTS[convention][symbol]


_TOKEN = re.compile(r"\s*(?:([A-Z][a-z]?)|(\d+)|([(\[{])|([)\]}])|([·*.•])|(\S))")


def parse_formula(formula: str, where: Location | None = None) -> dict[str, int]:
    """Element counts of a formula such as ``C8H5KO4``, ``Ca(OH)2`` or ``CuSO4·5H2O``."""
    where = where or Location()
    if not isinstance(formula, str) or not formula.strip():
        raise InputError(f"expected a chemical formula such as \"C8H5KO4\", found {formula!r}",
                         where)
    _check_size(formula, where)
    counts: dict[str, int] = {}
    for part_index, part in enumerate(re.split(r"[·*.•]", formula.strip())):
        match = re.match(r"\s*(\d+)", part) if part_index else None
        factor = int(match.group(1)) if match else 1
        body = part[match.end():] if match else part
        for element, n in _parse_group(body, formula, where).items():
            counts[element] = counts.get(element, 0) + factor * n
    return counts


_MAX_FORMULA_CHARS = 1000  # docs/limits.md
_MAX_COUNT_DIGITS = 9  # a count of up to 10⁹ atoms of one element in one group


def _check_size(formula: str, where: Location) -> None:
    if len(formula) > _MAX_FORMULA_CHARS:
        raise InputError(f"expected a formula of at most {_MAX_FORMULA_CHARS} characters "
                         f"(limits: docs/limits.md), found {len(formula)}", where)
    longest = max((len(m) for m in re.findall(r"\d+", formula)), default=0)
    if longest > _MAX_COUNT_DIGITS:
        raise InputError(f"expected counts of at most {_MAX_COUNT_DIGITS} digits in a formula "
                         f"(limits: docs/limits.md), found one of {longest} digits", where)


def _parse_group(text: str, formula: str, where: Location) -> dict[str, int]:
    stack: list[dict[str, int]] = [{}]
    closers: list[str] = []
    tokens = list(_TOKEN.finditer(text))
    if not tokens:
        raise InputError(f"expected a chemical formula, found '{formula}' (an empty part)",
                         where)
    last: dict[str, int] | str | None = None
    for token in tokens:
        element, digits, opening, closing, _, other = token.groups()
        if element:
            _known_element(element, formula, where)
            stack[-1][element] = stack[-1].get(element, 0) + 1
            last = element
        elif digits:
            _multiply(stack[-1], last, int(digits), formula, where)
            last = None
        elif opening:
            stack.append({})
            closers.append({"(": ")", "[": "]", "{": "}"}[opening])
            last = None
        elif closing:
            if not closers or closers.pop() != closing:
                raise InputError(f"expected balanced brackets in formula '{formula}', found "
                                 f"an unmatched '{closing}'", where)
            group = stack.pop()
            for key, n in group.items():
                stack[-1][key] = stack[-1].get(key, 0) + n
            last = group
        else:
            _refuse(other, formula, where)
    if closers:
        raise InputError(f"expected balanced brackets in formula '{formula}', found an "
                         f"unclosed bracket", where)
    return stack[0]


def _multiply(group: dict[str, int], last: Any, n: int, formula: str,
              where: Location) -> None:
    if last is None:
        raise InputError(f"expected an element or a group before the count {n} in formula "
                         f"'{formula}'", where)
    if n == 0:
        raise InputError(f"expected a count of at least 1 in formula '{formula}', found 0",
                         where)
    if isinstance(last, str):
        group[last] += n - 1
    else:
        for key, count in last.items():
            group[key] += count * (n - 1)
    return None


def _known_element(element: str, formula: str, where: Location) -> None:
    if element in _WEIGHTS[DEFAULT_CONVENTION]:
        return
    if element in _NO_WEIGHT:
        raise InputError(f"element '{element}' in formula '{formula}' has no standard atomic "
                         "weight; give the molar mass as a value with its uncertainty", where)
    from ._errors import did_you_mean
    raise InputError(f"expected element symbols in formula '{formula}', found "
                     f"'{element}'{did_you_mean(element, _WEIGHTS[DEFAULT_CONVENTION])}",
                     where)


def _refuse(char: str, formula: str, where: Location) -> None:
    if char in "+-^":
        raise InputError(f"expected a neutral formula, found a charge sign '{char}' in "
                         f"'{formula}' (the molar mass of an ion is not supported)", where)
    raise InputError(f"expected element symbols, counts and brackets in formula "
                     f"'{formula}', found '{char}'", where)


@dataclass(frozen=True, slots=True, kw_only=True)
class MolarMass:
    """A molar mass in g/mol with the atomic weights it was summed from."""

    formula: str
    convention: str
    counts: tuple[tuple[str, int], ...]
    weights: tuple[AtomicWeight, ...]

    @property
    def estimate(self) -> float:
        return math.fsum(n * w.estimate for (_, n), w in zip(self.counts, self.weights))

    @property
    def standard_uncertainty(self) -> float:
        return math.sqrt(math.fsum((n * w.standard_uncertainty) ** 2
                                   for (_, n), w in zip(self.counts, self.weights)))


def molar_mass(formula: str, convention: str = DEFAULT_CONVENTION,
               where: Location | None = None) -> MolarMass:
    """Molar mass of a formula with u(M)² = Σ_E (n_E·u(A_E))² (atoms fully correlated)."""
    if convention not in CONVENTIONS:
        raise InputError(f"expected an atomic-weight convention, one of "
                         f"{', '.join(CONVENTIONS)}, found {convention!r}", where)
    counts = parse_formula(formula, where)
    ordered = tuple(sorted(counts.items()))
    weights = tuple(atomic_weight(symbol, convention) for symbol, _ in ordered)
    return MolarMass(formula=formula, convention=convention, counts=ordered, weights=weights)


# CIPM-2007 coefficients (Picard et al. 2008, Table 1 and eqs. A1.1-A1.4).
_CIPM = dict(A=1.2378847e-5, B=-1.9121316e-2, C=33.93711047, D=-6.3431645e3,
             alpha=1.00062, beta=3.14e-8, gamma=5.6e-7, a0=1.58123e-6, a1=-2.9331e-8,
             a2=1.1043e-10, b0=5.707e-6, b1=-2.051e-8, c0=1.9898e-4, c1=-2.376e-6,
             d=1.83e-11, e=-0.765e-8, R=8.314472, Mv=18.01528e-3)


def air_density_expression(t: Any, p: Any, h: Any, x_co2: Any = 0.0004, *,
                           number: Callable[[str], Any], exp: Callable[[Any], Any]) -> Any:
    """CIPM-2007 moist-air density in kg/m³ as an expression of the arguments.

    ``t`` in °C, ``p`` in Pa, ``h`` relative humidity as a fraction, ``x_co2`` mole fraction;
    ``number`` makes a constant from its decimal text and ``exp`` the exponential, in the
    caller's expression type (so that this module imports nothing of the engine).
    """
    k = {name: number(repr(value)) for name, value in _CIPM.items()}
    temperature = t + number("273.15")
    p_sv = exp(k["A"] * temperature ** 2 + k["B"] * temperature + k["C"]
               + k["D"] / temperature)
    enhancement = k["alpha"] + k["beta"] * p + k["gamma"] * t ** 2
    x_v = h * enhancement * p_sv / p
    molar_air = (number("28.96546") + number("12.011") * (x_co2 - number("0.0004"))) \
        * number("1e-3")
    z = (1 - p / temperature * (k["a0"] + k["a1"] * t + k["a2"] * t ** 2
                                + (k["b0"] + k["b1"] * t) * x_v
                                + (k["c0"] + k["c1"] * t) * x_v ** 2)
         + p ** 2 / temperature ** 2 * (k["d"] + k["e"] * x_v ** 2))
    return p * molar_air / (z * k["R"] * temperature) * (1 - x_v * (1 - k["Mv"] / molar_air))


def air_density(t: float, p: float, h: float, x_co2: float = 0.0004) -> float:
    """CIPM-2007 moist-air density in kg/m³ (``t`` in °C, ``p`` in Pa, ``h`` the relative
    humidity as a fraction, ``x_co2`` the CO₂ mole fraction), for a user's numbers.

    A value that is not a finite number, a relative humidity or CO₂ fraction outside
    [0, 1], a pressure ≤ 0 or a temperature at or below absolute zero is an
    :class:`InputError`; a temperature or pressure outside the range of validity of the
    equation (15 °C to 27 °C, 600 hPa to 1100 hPa) gives a ``UserWarning`` (a pressure in
    hPa instead of Pa is 100 times too small)."""
    numbers = _checked_air(t=t, p=p, h=h, x_co2=x_co2)
    density = plain_air_density(*numbers)
    if not (math.isfinite(density) and density > 0):
        raise InputError(f"expected arguments at which the CIPM-2007 equation gives a density "
                         f"above 0, found {density:g} kg/m³ at t = {t!r} °C, p = {p!r} Pa, "
                         f"h = {h!r} (a temperature in K?)", Location(file="air_density()"))
    return density


def _checked_air(**arguments: Any) -> list[float]:
    import warnings

    from ._arguments import real

    numbers = []
    for name, value in arguments.items():
        number = real(value)
        if number is None or not math.isfinite(number):
            raise InputError(f"expected a finite number, found {type(value).__name__} "
                             f"{value!r}", Location(file="air_density()", key=name))
        numbers.append(number)
    t, p, h, x_co2 = numbers
    for name, bad, expected in (("h", not 0 <= h <= 1, "a relative humidity as a fraction "
                                 "from 0 to 1 (50 % is 0.5)"),
                                ("x_co2", not 0 <= x_co2 <= 1, "a mole fraction from 0 to 1"),
                                ("p", p <= 0, "a pressure in Pa above 0"),
                                ("t", t <= -273.15, "a temperature in °C above -273.15")):
        if bad:
            raise InputError(f"expected {expected}, found {arguments[name]!r}",
                             Location(file="air_density()", key=name))
    from ._plausibility import AIR_DENSITY_VALIDITY

    for (label, low, high, unit, stated), value in zip(AIR_DENSITY_VALIDITY, (t, p)):
        if not low <= value <= high:
            warnings.warn(f"air_density(): {label} {value:g} {unit} is outside the range of "
                          f"validity {stated} of the CIPM-2007 equation; a unit slip?",
                          UserWarning, stacklevel=3)
    return numbers


def plain_air_density(t: float, p: float, h: float, x_co2: float = 0.0004) -> float:
    """CIPM-2007 moist-air density in kg/m³ for plain numbers (°C, Pa, fraction), unchecked:
    the engine's own evaluation (it steps around the estimates, arrays of values)."""
    c = _CIPM
    temperature = t + 273.15
    p_sv = math.exp(c["A"] * temperature ** 2 + c["B"] * temperature + c["C"]
                    + c["D"] / temperature)
    x_v = h * (c["alpha"] + c["beta"] * p + c["gamma"] * t ** 2) * p_sv / p
    molar_air = (28.96546 + 12.011 * (x_co2 - 0.0004)) * 1e-3
    z = (1 - p / temperature * (c["a0"] + c["a1"] * t + c["a2"] * t ** 2
                                + (c["b0"] + c["b1"] * t) * x_v + (c["c0"] + c["c1"] * t)
                                * x_v ** 2)
         + p ** 2 / temperature ** 2 * (c["d"] + c["e"] * x_v ** 2))
    return p * molar_air / (z * c["R"] * temperature) * (1 - x_v * (1 - c["Mv"] / molar_air))
