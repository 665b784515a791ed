"""Model constants as parameters: kij of a pair, a component's Tc, Pc or omega, and a feed mole fraction.

A :class:`ModelParameter` names one constant q of a mixture model. :func:`constant_derivatives` gives
the exact derivatives of the model's attraction matrix a_ij(T) and co-volumes b_i with respect to q,
by the chain rule through the cubic's expressions (``_eos``):

    a_c,i = Omega_a R^2 Tc_i^2 / Pc_i,   b_i = Omega_b R Tc_i / Pc_i,   a_i = a_c,i alpha_i(T),
    a_ij = (1 - k_ij) sqrt(a_i a_j),

with alpha of Soave's form (1 + m(omega)(1 - sqrt(T/Tc)))^2 (Soave, Chem. Eng. Sci. 27 (1972) 1197;
Peng & Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59), Redlich-Kwong's (T/Tc)^-1/2 or 1. A feed mole
fraction ``z:NAME`` moves z_NAME by dq and scales every other fraction by the same factor so that the
sum stays 1: dz_NAME/dq = 1, dz_j/dq = -z_j / (1 - z_NAME) for j != NAME.

:func:`perturbed` returns the model with one constant changed, for checks by finite differences
and for loci in a constant.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from collections.abc import Sequence

import numpy as np

from contin import InputError
from contin.base import suggest

from numpy.polynomial.polynomial import polyder, polyval

from . import _eos
from ._components import lookup
from ._kij import split_pair

# dm/domega of each m(omega) polynomial of _eos, in increasing powers.
_SLOPES = {"srk": polyder(_eos._SRK), "pr1976": polyder(_eos._PR1976), "pr1978": polyder(_eos._PR1978)}

__all__ = ["KINDS", "ModelParameter", "blend_parameter", "parse_parameter", "parse_parameters", "constant_derivatives",
           "feed_derivative", "parameter_value", "parse_uncertainties", "perturbed", "read_correlations", "root_alpha_derivatives"]

#: The kinds of model constant, with what each is in plain words.
KINDS = {"kij": "interaction parameter of a pair", "Tc": "critical temperature (K)",
         "Pc": "critical pressure (Pa)", "omega": "acentric factor", "z": "feed mole fraction"}


@dataclass(frozen=True)
class ModelParameter:
    """One constant of a mixture model.

    Attributes:
        kind: ``kij``, ``Tc``, ``Pc``, ``omega``, ``z`` or ``blend``.
        indices: position(s) in the mixture of the component (one) or the pair (two, for ``kij``).
        label: the text it was given as (``"kij:methane-n-heptane"``).
        base, direction: for ``blend`` only, the feed z(lambda) = base + lambda direction (the first
            feed and the second minus the first).
    """

    kind: str
    indices: tuple[int, ...]
    label: str
    base: tuple = ()
    direction: tuple = ()

    @property
    def moves_feed(self) -> bool:
        """True for a feed fraction or a blend: the constant changes the amounts, not the model."""
        return self.kind in ("z", "blend")


def blend_parameter(z_first: np.ndarray, z_second: np.ndarray, label: str = "blend") -> ModelParameter:
    """The blend z(lambda) = (1 - lambda) z_first + lambda z_second of two feeds of the same components."""
    first, second = np.asarray(z_first, dtype=float), np.asarray(z_second, dtype=float)
    return ModelParameter("blend", (), label, tuple(first), tuple(second - first))


def parse_parameter(text: str, names: Sequence[str], extra=(), *, argument: str = "--sensitivities") -> ModelParameter:
    """A :class:`ModelParameter` from ``"kij:methane-n-heptane"``, ``"Tc:methane"``, ``"z:ethane"``, ...

    Raises:
        InputError: no ``KIND:NAME``, an unknown kind (with a suggestion), an unknown component, a
            component or pair not in the mixture, a component paired with itself.
    """
    label = str(text).strip()
    kind, colon, target = label.partition(":")
    kind, target = kind.strip(), target.strip()
    if not colon or not target:
        raise InputError(f"{argument} entry {label!r} must be KIND:NAME, e.g. 'Tc:methane' or 'kij:methane-ethane'")
    if kind not in KINDS:
        raise InputError(f"{argument} entry {label!r}: unknown constant {kind!r}; use one of "
                         f"{', '.join(KINDS)}{suggest(kind, KINDS)}")
    names = list(names)
    if kind == "kij":
        i, j = split_pair(target, names, extra, argument)
        if i == j:
            raise InputError(f"{argument} entry {label!r} pairs a component with itself; kij is zero on the diagonal")
        return ModelParameter(kind, (min(i, j), max(i, j)), label)
    component = lookup(target, extra, argument=argument)
    if component.name not in names:
        raise InputError(f"{argument} entry {label!r}: {component.name!r} is not a component of the mixture "
                         f"({', '.join(names)})")
    return ModelParameter(kind, (names.index(component.name),), label)


def parse_parameters(text: str, names: Sequence[str], extra=(), *, argument: str = "--sensitivities") -> tuple[ModelParameter, ...]:
    """Comma-separated :func:`parse_parameter` entries; refuses an empty list and repeats."""
    entries = [part for part in str(text or "").split(",") if part.strip()]
    if not entries:
        raise InputError(f"{argument} is empty; give constants such as 'kij:methane-ethane,Tc:methane'")
    parameters = tuple(parse_parameter(entry, names, extra, argument=argument) for entry in entries)
    seen = {}
    for parameter in parameters:
        key = (parameter.kind, parameter.indices)
        if key in seen:
            raise InputError(f"{argument} names one constant twice ({seen[key]!r} and {parameter.label!r})")
        seen[key] = parameter.label
    return parameters


def parameter_value(mixture, z: np.ndarray, parameter: ModelParameter) -> float:
    """The present value of the constant."""
    if parameter.kind == "kij":
        return float(mixture.kij[parameter.indices])
    if parameter.kind == "z":
        return float(z[parameter.indices[0]])
    if parameter.kind == "blend":
        direction = np.array(parameter.direction)
        return float((np.asarray(z) - parameter.base) @ direction / (direction @ direction))
    return float(getattr(mixture, parameter.kind)[parameter.indices[0]])


def feed_derivative(z: np.ndarray, parameter: ModelParameter) -> np.ndarray:
    """dz/dq: the fraction named moves by dq, the others shrink in proportion (the sum stays 1); for a
    blend, the second feed minus the first."""
    if parameter.kind == "blend":
        return np.array(parameter.direction)
    k = parameter.indices[0]
    dz = -np.asarray(z, dtype=float) / (1.0 - z[k])
    dz[k] = 1.0
    return dz


def perturbed(mixture, z: np.ndarray, parameter: ModelParameter, value: float):
    """(mixture, z) with the constant set to ``value`` (the feed renormalised as in :func:`feed_derivative`).

    Raises:
        InputError: a value the model cannot take (kij outside (-1, 1), Tc or Pc not positive, a feed
            fraction outside (0, 1)).
    """
    from ._mixture import Mixture

    if parameter.kind == "blend":
        z = np.array(parameter.base) + value * np.array(parameter.direction)
        if not np.all(z > 0):
            raise InputError(f"blend = {value:g} gives a feed with a mole fraction of zero or below; keep it in [0, 1]")
        return mixture, z
    i = parameter.indices[0]
    if parameter.kind == "z":
        if not 0.0 < value < 1.0:
            raise InputError(f"{parameter.label} = {value:g}: a feed mole fraction must lie strictly between 0 and 1")
        z = np.asarray(z, dtype=float) * (1.0 - value) / (1.0 - z[i])
        z[i] = value
        return mixture, z
    if parameter.kind == "kij":
        if not -1.0 < value < 1.0:
            raise InputError(f"{parameter.label} = {value:g} lies outside (-1, 1), where a kij must be")
        kij = np.array(mixture.kij)
        j = parameter.indices[1]
        kij[i, j] = kij[j, i] = value
        return Mixture(mixture.components, mixture.family, kij), z
    components = list(mixture.components)
    components[i] = replace(components[i], **{parameter.kind: float(value)})
    return Mixture(tuple(components), mixture.family, mixture.kij), z


def root_alpha_derivatives(family, T: float, Tc: np.ndarray, omega: np.ndarray):
    """(s, ds/dTc, ds/domega) with s = sqrt(alpha(T)) per component: shared by every constant at one T."""
    if family.alpha_form == "constant":
        one = np.ones_like(Tc)
        return one, 0.0 * one, 0.0 * one
    root_tr = np.sqrt(T / Tc)
    if family.alpha_form == "inverse_root":
        s = root_tr**-0.5
        return s, 0.25 * s / Tc, 0.0 * s
    m = family.m(omega)
    s = 1.0 + m * (1.0 - root_tr)
    return s, 0.5 * m * root_tr / Tc, _m_slope(family, omega) * (1.0 - root_tr)


def _m_slope(family, omega: np.ndarray) -> np.ndarray:
    """dm/domega of the family's m(omega) (the polynomials of ``_eos``, differentiated once here)."""
    w = np.asarray(omega, dtype=float)
    if family.name == "srk":
        return polyval(w, _SLOPES["srk"])
    return np.where(w > _eos._PR1978_FROM_OMEGA, polyval(w, _SLOPES["pr1978"]), polyval(w, _SLOPES["pr1976"]))


def constant_derivatives(mixture, parameter: ModelParameter, T: float, roots=None) -> tuple[np.ndarray, np.ndarray]:
    """(da_ij/dq at T, array (N, N); db_i/dq, array (N,)): exact, by the chain rule of the module docstring.

    A feed fraction changes neither (both zero); see :func:`feed_derivative`. ``roots`` is
    :func:`root_alpha_derivatives` at T, if already computed.
    """
    n = mixture.size
    dA, db = np.zeros((n, n)), np.zeros(n)
    if parameter.moves_feed:
        return dA, db
    s, ds_dTc, ds_domega = roots or root_alpha_derivatives(mixture.family, T, mixture.Tc, mixture.omega)
    root_ac = np.sqrt(mixture.a_critical)
    root = root_ac * s  # sqrt(a_i(T))
    i = parameter.indices[0]
    if parameter.kind == "kij":
        j = parameter.indices[1]
        dA[i, j] = dA[j, i] = -root[i] * root[j]
        return dA, db
    droot = np.zeros(n)
    if parameter.kind == "Tc":
        droot[i] = root_ac[i] / mixture.Tc[i] * s[i] + root_ac[i] * ds_dTc[i]
        db[i] = mixture.b[i] / mixture.Tc[i]
    elif parameter.kind == "Pc":
        droot[i] = -0.5 * root[i] / mixture.Pc[i]
        db[i] = -mixture.b[i] / mixture.Pc[i]
    else:  # omega
        droot[i] = root_ac[i] * ds_domega[i]
    one_minus_k = 1.0 - mixture.kij
    dA = one_minus_k * (np.outer(droot, root) + np.outer(root, droot))
    return dA, db



def parse_uncertainties(text: str, mixture, z: np.ndarray, extra=(), *,
                        argument: str = "--uncertainty") -> tuple[tuple[ModelParameter, float], ...]:
    """Standard uncertainties of constants from ``"Tc=0.5%,Pc=1%,omega=3%,kij:methane-n-heptane=0.01"``.

    A value with ``%`` is relative to the constant's value, one without is absolute (K, Pa or
    dimensionless). A bare ``Tc``, ``Pc``, ``omega`` or ``kij`` applies to every component (every pair);
    an entry naming one component or pair overrides it there. Constants with a zero uncertainty are
    dropped.

    Returns:
        ((parameter, standard uncertainty in the constant's unit), ...), in the mixture's order.

    Raises:
        InputError: an entry without ``=``, a constant the model lacks, a negative or non-finite
            uncertainty, a relative uncertainty of a kij that is zero, a constant given twice.
    """
    from ._units import parse_number

    names = list(mixture.names)
    entries = [part.strip() for part in str(text or "").split(",") if part.strip()]
    if not entries:
        raise InputError(f"{argument} is empty; give e.g. 'Tc=0.5%,kij:methane-ethane=0.01'")
    bare, named = {}, {}
    for entry in entries:
        key, equals, value = entry.rpartition("=")
        key = key.strip()
        if not equals or not key:
            raise InputError(f"{argument} entry {entry!r} must be CONSTANT=VALUE, e.g. 'Tc=0.5%' or 'Pc:methane=5e4'")
        relative = value.strip().endswith("%")
        number = parse_number(value.strip().removesuffix("%"), f"{argument} entry {entry!r}")
        if not number >= 0.0:
            raise InputError(f"{argument} entry {entry!r}: an uncertainty cannot be negative")
        if ":" not in key:
            if key not in KINDS or key == "z":
                raise InputError(f"{argument} entry {entry!r}: the model has no constant {key!r} for every "
                                 f"component; use Tc, Pc, omega or kij, or name one: 'z:NAME'{suggest(key, KINDS)}")
            if key in bare:
                raise InputError(f"{argument} gives {key!r} twice; give each constant once")
            bare[key] = (number, relative, entry)
            continue
        parameter = parse_parameter(key, names, extra, argument=argument)
        slot = (parameter.kind, parameter.indices)
        if slot in named:
            raise InputError(f"{argument} gives one constant twice ({named[slot][3].label!r} and {key!r})")
        named[slot] = (number, relative, entry, parameter)
    chosen = []
    for kind in ("kij", "Tc", "Pc", "omega", "z"):
        slots = ([(i, j) for i in range(len(names)) for j in range(i + 1, len(names))] if kind == "kij"
                 else [(i,) for i in range(len(names))])
        for indices in slots:
            given = named.get((kind, indices)) or bare.get(kind)
            if given is None:
                continue
            label = given[3].label if len(given) == 4 else (
                f"{kind}:{names[indices[0]]}-{names[indices[1]]}" if kind == "kij" else f"{kind}:{names[indices[0]]}")
            parameter = ModelParameter(kind, indices, label)
            number, relative = given[0], given[1]
            value = parameter_value(mixture, z, parameter)
            if relative and value == 0.0 and number > 0.0 and len(given) == 4:
                raise InputError(f"{argument} entry {given[2]!r}: {label} is 0, so a relative uncertainty of it is "
                                 "zero; give an absolute one, e.g. 0.01")
            sigma = number / 100.0 * abs(value) if relative else number
            if sigma > 0.0:
                chosen.append((parameter, sigma))
    return tuple(chosen)


def read_correlations(path, uncertainties: Sequence[tuple[ModelParameter, float]], names: Sequence[str], extra=(),
                      *, argument: str = "--correlations") -> np.ndarray:
    """The correlation matrix of the uncertain constants from a CSV file, in the order of ``uncertainties``.

    The file (``#`` lines are comments) has a header ``constant,LABEL,LABEL,...`` and one row per label in
    the same order, ``LABEL,r,r,...``, with labels as in ``--uncertainty`` (``Tc:methane``,
    ``kij:methane-ethane``). Constants the file does not name are uncorrelated with the rest.

    Raises:
        InputError (naming the file and line): an unreadable file, a row of the wrong length or order, a
            label that is not an uncertain constant, a value outside [-1, 1], a diagonal that is not 1, a
            matrix that is not symmetric or not positive semidefinite (a set of correlations that cannot
            all hold at once).
    """
    import csv
    import io

    from contin.base import read_input_text

    from ._units import parse_number

    where = f"{argument} {str(path)!r}"
    text = read_input_text(path, where, 2**20)
    lines = [(k, line) for k, line in enumerate(text.splitlines(), 1) if line.strip() and not line.lstrip().startswith("#")]
    if not lines:
        raise InputError(f"{where} is empty; give a header 'constant,LABEL,...' and one row per label")
    rows = [(k, [cell.strip() for cell in row]) for (k, _), row in zip(lines, csv.reader(io.StringIO(
        "\n".join(line for _, line in lines))))]
    (head_line, header), body = rows[0], rows[1:]
    labels = header[1:]
    slots = {(p.kind, p.indices): k for k, (p, _) in enumerate(uncertainties)}
    positions = []
    for label in labels:
        parameter = parse_parameter(label, names, extra, argument=f"{where} line {head_line}")
        if (parameter.kind, parameter.indices) not in slots:
            raise InputError(f"{where} line {head_line}: {label!r} has no uncertainty; give it one in --uncertainty")
        positions.append(slots[(parameter.kind, parameter.indices)])
    if len(set(positions)) != len(positions) or len(body) != len(labels):
        raise InputError(f"{where}: give each label once in the header and one row per label, in the same order")
    matrix = np.empty((len(labels), len(labels)))
    for (line, row), label, i in zip(body, labels, range(len(labels))):
        if len(row) != len(labels) + 1 or row[0] != label:
            raise InputError(f"{where} line {line}: expected the row of {label!r} with {len(labels)} values")
        for j, cell in enumerate(row[1:]):
            value = parse_number(cell, f"{where} line {line}")
            if not -1.0 <= value <= 1.0:
                raise InputError(f"{where} line {line}: correlation {value:g} lies outside [-1, 1]")
            matrix[i, j] = value
    if np.any(np.diag(matrix) != 1.0):
        raise InputError(f"{where}: a constant's correlation with itself (the diagonal) must be 1")
    if not np.array_equal(matrix, matrix.T):
        i, j = np.argwhere(matrix != matrix.T)[0]
        raise InputError(f"{where}: not symmetric: {labels[i]} with {labels[j]} is {matrix[i, j]:g}, "
                         f"{labels[j]} with {labels[i]} is {matrix[j, i]:g}")
    smallest = float(np.linalg.eigvalsh(matrix)[0])
    # Round-off in eigvalsh is about 1e-16 per unit entry; a matrix short of semidefinite by more is
    # a set of correlations that cannot all hold (e.g. a with b and b with c at 0.9, a with c at -0.9).
    if smallest < -1e-12:
        raise InputError(f"{where}: the correlations are not positive semidefinite (smallest eigenvalue "
                         f"{smallest:.3g}): they cannot all hold at once")
    full = np.eye(len(uncertainties))
    full[np.ix_(positions, positions)] = matrix
    return full
