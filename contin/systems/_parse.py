"""Safe parsing of expression text (an untrusted problem file) into sympy expressions.

The text is read by Python's :mod:`ast` module and every node is checked against an allow-list:
numbers, declared names, ``+ - * / **``, unary minus and plus, and calls of a fixed set of
mathematical functions. Nothing is ever evaluated by Python: no ``eval``, ``exec``, ``sympify`` on
text, no attribute access. The sympy expression is then built node by node.

Indexed families: when ``names`` declares ``u[0]``, ``u[1]``, ... (an unknown family of a problem
file), ``u[k]`` names one of them. The index is an integer expression of whole numbers and index
variables (``indices``, e.g. ``i`` of an equation family) with ``+ - *`` only, computed here in Python
integers; an index outside the family is refused with the family's range. Any other subscript is refused.

Work is bounded before sympy sees a number: the input length, the nesting depth, and the size of
constant powers (``9**9**9**9`` is refused at once instead of being computed).
"""

from __future__ import annotations

import ast
import math
from collections.abc import Mapping

import sympy

from ..base._errors import InputError
from ..base._names import suggest

__all__ = [
    "FUNCTIONS",
    "CONSTANTS",
    "MAX_LENGTH",
    "MAX_DEPTH",
    "MAX_POWER_BITS",
    "MAX_EXPONENT",
    "MAX_MINMAX_ARGUMENTS",
    "MAX_FACTORS",
    "MAX_POWER_CHAIN",
    "element_name",
    "expand_indices",
    "parse_expression",
]

#: Longest expression text accepted, in characters.
MAX_LENGTH = 200_000
#: Deepest nesting accepted (parentheses, calls, powers); chains of + - and * / do not count.
MAX_DEPTH = 100
#: Largest constant power computed exactly, in bits of the result (about 3000 decimal digits).
MAX_POWER_BITS = 10_000
#: Largest integer exponent (numerator of a rational exponent) of a symbolic base.
MAX_EXPONENT = 10_000
#: Most arguments of one min() or max(), nested calls of the same function counted together: the
#: derivative of max(a1, ..., an) grows much faster than n (measured: 20 arguments take seconds,
#: 40 take 20-60 s; benchmarks/fuzz.py).
MAX_MINMAX_ARGUMENTS = 12
#: Most factors of one product (``a*b/c*...``, parentheses included): its derivative has about
#: n**2 factors (measured: 200 factors take 1-12 s, 500 take 36-70 s).
MAX_FACTORS = 100
#: Longest chain of powers ``a**b**c**...`` with a symbol in it.
MAX_POWER_CHAIN = 8


def _heaviside(z: sympy.Expr, *_: sympy.Expr) -> sympy.Expr:
    # Written with sign() so every back end can evaluate and differentiate it the same way.
    return (1 + sympy.sign(z)) / 2


#: Functions a problem file may call: name -> (sympy function, smallest, largest argument count).
FUNCTIONS: Mapping[str, tuple[object, int, int | None]] = {
    "exp": (sympy.exp, 1, 1),
    "log": (sympy.log, 1, 1),
    "sqrt": (sympy.sqrt, 1, 1),
    "sin": (sympy.sin, 1, 1),
    "cos": (sympy.cos, 1, 1),
    "tan": (sympy.tan, 1, 1),
    "asin": (sympy.asin, 1, 1),
    "acos": (sympy.acos, 1, 1),
    "atan": (sympy.atan, 1, 1),
    "atan2": (sympy.atan2, 2, 2),
    "sinh": (sympy.sinh, 1, 1),
    "cosh": (sympy.cosh, 1, 1),
    "tanh": (sympy.tanh, 1, 1),
    "asinh": (sympy.asinh, 1, 1),
    "acosh": (sympy.acosh, 1, 1),
    "atanh": (sympy.atanh, 1, 1),
    "abs": (sympy.Abs, 1, 1),
    "min": (sympy.Min, 2, None),
    "max": (sympy.Max, 2, None),
}

#: Extra functions in the text the compile cache writes itself (sympy's own spellings).
_CACHE_FUNCTIONS: Mapping[str, tuple[object, int, int | None]] = {
    "Abs": (sympy.Abs, 1, 1),
    "Min": (sympy.Min, 2, None),
    "Max": (sympy.Max, 2, None),
    "sign": (sympy.sign, 1, 1),
    "Heaviside": (_heaviside, 1, 2),
}

#: Named constants; a declared unknown, parameter or constant of the same name takes precedence.
CONSTANTS: Mapping[str, sympy.Expr] = {"pi": sympy.pi, "E": sympy.E}

_OPERATORS = {
    ast.Add: "+",
    ast.Sub: "-",
    ast.Mult: "*",
    ast.Div: "/",
    ast.Pow: "**",
    ast.FloorDiv: "//",
    ast.Mod: "%",
    ast.MatMult: "@",
    ast.BitAnd: "&",
    ast.BitOr: "|",
    ast.BitXor: "^",
    ast.LShift: "<<",
    ast.RShift: ">>",
}

_REFUSED = {
    ast.Attribute: "attribute access (a.b) is not allowed",
    ast.Subscript: "subscripts (a[i]) are not allowed",
    ast.Lambda: "lambda functions are not allowed",
    ast.ListComp: "comprehensions are not allowed",
    ast.SetComp: "comprehensions are not allowed",
    ast.DictComp: "comprehensions are not allowed",
    ast.GeneratorExp: "generator expressions are not allowed",
    ast.JoinedStr: "f-strings are not allowed",
    ast.FormattedValue: "f-strings are not allowed",
    ast.Compare: "comparisons are not allowed: write the equation as 'left - right'",
    ast.BoolOp: "'and' / 'or' are not allowed",
    ast.IfExp: "'if ... else' expressions are not allowed",
    ast.NamedExpr: "assignment expressions (:=) are not allowed",
    ast.Starred: "starred arguments are not allowed",
    ast.List: "lists are not allowed",
    ast.Tuple: "tuples are not allowed",
    ast.Set: "sets are not allowed",
    ast.Dict: "dictionaries are not allowed",
    ast.Await: "'await' is not allowed",
    ast.Yield: "'yield' is not allowed",
    ast.YieldFrom: "'yield' is not allowed",
    ast.Slice: "slices are not allowed",
}


class _Library:
    """How to build numbers, sums, products, powers and function calls in one symbolic library."""

    def __init__(self, name: str) -> None:
        self.name = name
        if name == "sympy":
            self.integer, self.real = sympy.Integer, sympy.Float
            self.add = lambda terms: sympy.Add(*terms)
            self.mul = lambda terms: sympy.Mul(*terms)
            self.pow = sympy.Pow
            self.functions = {name: entry[0] for name, entry in {**FUNCTIONS, **_CACHE_FUNCTIONS}.items()}
            self.constants = dict(CONSTANTS)
            self.undefined = (sympy.zoo, sympy.nan, sympy.oo, -sympy.oo)
            return
        import symengine

        self.integer, self.real = symengine.Integer, symengine.RealDouble
        self.add = lambda terms: symengine.Add(*terms)
        self.mul = lambda terms: symengine.Mul(*terms)
        self.pow = lambda base, exponent: base**exponent
        self.functions = {
            "exp": symengine.exp, "log": symengine.log, "sqrt": symengine.sqrt, "sin": symengine.sin,
            "cos": symengine.cos, "tan": symengine.tan, "asin": symengine.asin, "acos": symengine.acos,
            "atan": symengine.atan, "atan2": symengine.atan2, "sinh": symengine.sinh, "cosh": symengine.cosh,
            "tanh": symengine.tanh, "asinh": symengine.asinh, "acosh": symengine.acosh, "atanh": symengine.atanh,
            "abs": symengine.Abs, "min": symengine.Min, "max": symengine.Max,
        }
        self.constants = {"pi": symengine.pi, "E": symengine.E}
        self.undefined = (symengine.zoo, symengine.nan, symengine.oo, -symengine.oo)

    def is_undefined(self, expr) -> bool:
        return any(expr.has(value) for value in self.undefined)


def _library(name: str) -> _Library:
    if name not in ("sympy", "symengine"):
        raise ValueError(f"library must be 'sympy' or 'symengine', not {name!r}")
    return _Library(name)


class _Refused(Exception):
    """Internal: a refusal at a node; turned into an InputError with the column."""

    def __init__(self, message: str, node: ast.AST | None) -> None:
        super().__init__(message)
        self.node = node


def parse_expression(
    text: str,
    names: Mapping[str, sympy.Expr],
    *,
    label: str = "expression",
    library: str = "sympy",
    indices: Mapping[str, int] | None = None,
    _cache_format: bool = False,
) -> sympy.Expr:
    """Parse expression text into a sympy expression, allowing only arithmetic on declared names.

    Args:
        text: the expression, e.g. ``"u**3 - u + p"``.
        names: every name the text may use -> the sympy object it stands for (a symbol for an
            unknown or parameter, a number for a constant).
        label: where the text comes from, put in front of every message, e.g.
            ``"reactor.toml: equation 'balance' (line 12)"``.
        library: ``"sympy"`` (default) or ``"symengine"``: which library builds the expression
            (``names`` must hold that library's objects).
        indices: index variables and their values for subscripts, e.g. ``{"i": 3}`` makes ``u[i+1]``
            the declared name ``u[4]``.

    Returns:
        The expression (a sympy or a symengine object).

    Raises:
        InputError: ``"<label>, column <c>: <what is wrong>"`` for anything outside the allow-list,
            an undeclared name (with a "did you mean" suggestion), too long or too deep input, or a
            constant power too large to compute.
    """
    if not isinstance(text, str):
        raise InputError(f"{label}: expected the expression as text, got {type(text).__name__}")
    if len(text) > MAX_LENGTH:
        raise InputError(
            f"{label}: the expression is {len(text)} characters long; the limit is {MAX_LENGTH}. "
            "Split it with intermediate unknowns or constants"
        )
    if not text.strip():
        raise InputError(f"{label}: the expression is empty")
    if "\n" in text.strip() or "\r" in text:
        # One expression per line keeps columns meaningful; TOML multi-line strings are refused.
        raise InputError(f"{label}: the expression spans several lines; write it on one line")
    try:
        tree = ast.parse(text.strip(), mode="eval")
    except SyntaxError as error:
        column = error.offset or 1
        reason = error.msg
        if "too many nested" in reason or "too complex" in reason:
            reason = f"the expression is nested too deeply (limit {MAX_DEPTH} levels)"
        raise InputError(f"{label}, column {column}: cannot read the expression: {reason}") from None
    except (RecursionError, MemoryError):
        raise InputError(
            f"{label}: the expression is nested too deeply, or is too long a chain of terms, to read "
            f"(limits: {MAX_DEPTH} levels, about 2000 terms in one sum); split it with intermediate unknowns"
        ) from None
    except ValueError as error:  # e.g. a literal with too many digits, a null character
        from ..base._output import describe_value_error

        raise InputError(f"{label}: cannot read the expression: {describe_value_error(error)}") from None
    builder = _Builder(text.strip(), names, _cache_format, _library(library), indices or {})
    try:
        if not _cache_format:
            _check_size(tree.body)
        result = builder.build(tree.body, 0)
    except _Refused as refusal:
        column = builder.column(refusal.node)
        where = f"{label}, column {column}" if column is not None else label
        raise InputError(f"{where}: {refusal}") from None
    except RecursionError:
        raise InputError(f"{label}: the expression is nested too deeply (limit {MAX_DEPTH} levels)") from None
    if builder.library.is_undefined(result):
        raise InputError(f"{label}: the expression is infinite or undefined (a division by zero?)")
    return result


def element_name(family: str, index: int) -> str:
    """The declared name of entry ``index`` of an indexed family: ``u[3]``."""
    return f"{family}[{index}]"


_LARGEST_INDEX = 10**12


def _index_value(node: ast.AST, indices: Mapping[str, int]) -> int:
    """An index: whole numbers, index variables, + - * and parentheses, computed in Python integers."""
    if isinstance(node, ast.Constant) and isinstance(node.value, int) and not isinstance(node.value, bool):
        value = node.value
    elif isinstance(node, ast.Name):
        if node.id not in indices:
            known = ", ".join(sorted(indices)) or "none here"
            raise _Refused(f"{node.id!r} is not an index variable (index variables: {known})", node)
        value = int(indices[node.id])
    elif isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
        value = _index_value(node.operand, indices)
        value = -value if isinstance(node.op, ast.USub) else value
    elif isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub, ast.Mult)):
        left, right = _index_value(node.left, indices), _index_value(node.right, indices)
        value = left + right if isinstance(node.op, ast.Add) else left - right if isinstance(node.op, ast.Sub) else left * right
    else:
        raise _Refused("an index is whole numbers and index variables with + - * only, e.g. u[i+1]", node)
    if abs(value) > _LARGEST_INDEX:
        raise _Refused(f"the index {value} is too large", node)
    return value


def expand_indices(text: str, indices: Mapping[str, int], families: Mapping[str, int], *, label: str) -> str:
    """One member of an equation family: ``text`` with every index variable replaced by its value.

    Each subscript of a family (``u[i+1]``) becomes its entry (``u[5]`` at i = 4), checked against the
    family's size (``families``: name -> count); a bare index variable becomes its value as a number.
    The result is text for :func:`parse_expression`, which applies the whole allow-list to it; text
    that does not parse is returned unchanged, so that function reports it.

    Raises:
        InputError: ``"<label>, column <c>: u[i+1] is u[100] at i = 99, outside u[0..99]; ..."``, or
            an index that is not whole numbers and index variables.
    """
    try:
        tree = ast.parse(text.strip(), mode="eval")
    except (SyntaxError, ValueError, RecursionError, MemoryError):
        return text
    source = text.strip()
    at = ", ".join(f"{name} = {value}" for name, value in sorted(indices.items()))

    class Substitute(ast.NodeTransformer):
        def visit_Subscript(self, node: ast.Subscript) -> ast.AST:
            if not (isinstance(node.value, ast.Name) and node.value.id in families):
                return self.generic_visit(node)
            family = node.value.id
            index = _index_value(node.slice, indices)
            if not 0 <= index < families[family]:
                shown = ast.get_source_segment(source, node) or f"{family}[...]"
                raise _Refused(f"{shown} is {element_name(family, index)} at {at}, outside "
                               f"{family}[0..{families[family] - 1}]; change the index or the range", node)
            return ast.copy_location(ast.Subscript(node.value, ast.Constant(index), node.ctx), node)

        def visit_Name(self, node: ast.Name) -> ast.AST:
            return ast.copy_location(ast.Constant(int(indices[node.id])), node) if node.id in indices else node

    try:
        return ast.unparse(Substitute().visit(tree))
    except _Refused as refusal:
        offset = getattr(refusal.node, "col_offset", None)
        column = None if offset is None else len(source.encode("utf-8")[:offset].decode("utf-8", errors="ignore")) + 1
        raise InputError(f"{label}, column {column}: {refusal}" if column else f"{label}: {refusal}") from None


def _factor_count(node: ast.AST, seen: set[int]) -> int:
    """Factors with a name in them of a product as sympy flattens it (through parentheses and unary
    signs); numbers merge into one coefficient and do not count. The product's own nodes go into
    ``seen`` (a product inside a call in it is a product of its own)."""
    count, stack = 0, [node]
    while stack:
        current = stack.pop()
        if isinstance(current, ast.UnaryOp) and isinstance(current.op, (ast.USub, ast.UAdd)):
            stack.append(current.operand)
        elif isinstance(current, ast.BinOp) and isinstance(current.op, (ast.Mult, ast.Div)):
            seen.add(id(current))
            stack += [current.left, current.right]
        elif _has_name(current):
            count += 1
    return count


def _minmax_count(node: ast.Call, name: str) -> int:
    """Arguments of min()/max() as sympy flattens them (nested calls of the same function merge)."""
    count, stack = 0, list(node.args)
    while stack:
        current = stack.pop()
        if isinstance(current, ast.Call) and isinstance(current.func, ast.Name) and current.func.id == name:
            stack += current.args
        else:
            count += 1
    return count


def _power_chain(node: ast.BinOp) -> int:
    length, current = 1, node
    while isinstance(current, ast.BinOp) and isinstance(current.op, ast.Pow):
        length += 1
        current = current.right if isinstance(current.right, ast.BinOp) and isinstance(current.right.op, ast.Pow) \
            else current.left if isinstance(current.left, ast.BinOp) and isinstance(current.left.op, ast.Pow) else None
    return length


def _has_name(node: ast.AST) -> bool:
    return any(isinstance(part, ast.Name) for part in ast.walk(node))


def _check_size(root: ast.AST) -> None:
    """Refuse, before any symbolic work, shapes whose derivatives would explode in size."""
    seen_products: set[int] = set()
    for node in ast.walk(root):
        if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Mult, ast.Div)) and id(node) not in seen_products:
            factors = _factor_count(node, seen_products)  # each product counted once, at its outermost node
            if factors > MAX_FACTORS:
                raise _Refused(f"one product has {factors} factors; the limit is {MAX_FACTORS} (its derivative "
                               "would be too large): split it with intermediate unknowns or constants", node)
        elif isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id in ("min", "max"):
            count = _minmax_count(node, node.func.id)
            if count > MAX_MINMAX_ARGUMENTS:
                raise _Refused(f"{node.func.id}() has {count} arguments (nested calls included); the limit is "
                               f"{MAX_MINMAX_ARGUMENTS}: split it, e.g. {node.func.id}(a, b) of two shorter ones "
                               "through an intermediate unknown", node)
        elif isinstance(node, ast.BinOp) and isinstance(node.op, ast.Pow):
            length = _power_chain(node)
            if length > MAX_POWER_CHAIN and _has_name(node):
                raise _Refused(f"a chain of {length} powers (a**b**c...); the limit is {MAX_POWER_CHAIN}: "
                               "use parentheses and intermediate unknowns", node)


class _Builder:
    """Walks an allow-listed ast and builds the sympy expression."""

    def __init__(self, text: str, names: Mapping[str, sympy.Expr], cache_format: bool, library: _Library,
                 indices: Mapping[str, int]) -> None:
        self.text = text
        self.names = names
        self.indices = indices
        self._families: dict[str, int] | None = None
        self.library = library
        self.functions = {**FUNCTIONS, **_CACHE_FUNCTIONS} if cache_format else FUNCTIONS

    def column(self, node: ast.AST | None) -> int | None:
        offset = getattr(node, "col_offset", None)
        if offset is None:
            return None
        # ast columns count UTF-8 bytes; report characters, starting at 1.
        return len(self.text.encode("utf-8")[:offset].decode("utf-8", errors="ignore")) + 1

    def build(self, node: ast.AST, depth: int) -> sympy.Expr:
        if depth > MAX_DEPTH:
            raise _Refused(f"the expression is nested too deeply (limit {MAX_DEPTH} levels)", node)
        if isinstance(node, ast.Constant):
            return self.number(node)
        if isinstance(node, ast.Name):
            return self.name(node)
        if isinstance(node, ast.UnaryOp):
            if isinstance(node.op, ast.USub):
                return -self.build(node.operand, depth + 1)
            if isinstance(node.op, ast.UAdd):
                return self.build(node.operand, depth + 1)
            word = "'not'" if isinstance(node.op, ast.Not) else "'~'"
            raise _Refused(f"the operator {word} is not allowed; use + - * / **", node)
        if isinstance(node, ast.BinOp):
            if isinstance(node.op, (ast.Add, ast.Sub)):
                return self.chain(node, depth, (ast.Add, ast.Sub))
            if isinstance(node.op, (ast.Mult, ast.Div)):
                return self.chain(node, depth, (ast.Mult, ast.Div))
            if isinstance(node.op, ast.Pow):
                return self.power(node, depth)
            symbol = _OPERATORS.get(type(node.op), type(node.op).__name__)
            raise _Refused(f"the operator '{symbol}' is not allowed; use + - * / **", node)
        if isinstance(node, ast.Call):
            return self.call(node, depth)
        if isinstance(node, ast.Subscript) and self.families:
            return self.element(node)
        for kind, message in _REFUSED.items():
            if isinstance(node, kind):
                raise _Refused(message, node)
        raise _Refused(f"{type(node).__name__} is not allowed in an expression", node)

    def chain(self, node: ast.BinOp, depth: int, operators: tuple[type, ...]) -> sympy.Expr:
        # a + b - c + ... is a left-leaning tree as deep as it is long: walk it without recursion
        # so that long sums (all-pairs mixing rules) do not count as deep nesting.
        operands: list[tuple[type, ast.AST]] = []
        current: ast.AST = node
        while isinstance(current, ast.BinOp) and isinstance(current.op, operators):
            operands.append((type(current.op), current.right))
            current = current.left
        first = self.build(current, depth + 1)
        terms = [first]
        if operators[0] is ast.Add:
            for op, operand in reversed(operands):
                value = self.build(operand, depth + 1)
                terms.append(value if op is ast.Add else -value)
            return self.library.add(terms)
        for op, operand in reversed(operands):
            value = self.build(operand, depth + 1)
            if op is ast.Div:
                if value == 0:
                    raise _Refused("division by zero", operand)
                value = self.library.pow(value, self.library.integer(-1))
            terms.append(value)
        return self.library.mul(terms)

    def power(self, node: ast.BinOp, depth: int) -> sympy.Expr:
        base = self.build(node.left, depth + 1)
        exponent = self.build(node.right, depth + 1)
        if exponent.is_Rational:
            top = abs(int(exponent.as_numer_denom()[0]))
            if base.is_Rational:
                size = max(abs(int(part)) for part in base.as_numer_denom())
                bits = top * math.log2(size) if size > 1 else 0.0
                if bits > MAX_POWER_BITS:
                    raise _Refused(
                        f"the constant power is too large to compute (about {bits:.3g} bits; "
                        f"the limit is {MAX_POWER_BITS})",
                        node,
                    )
            elif top > MAX_EXPONENT:
                raise _Refused(f"the exponent {exponent} is too large (the limit is {MAX_EXPONENT})", node)
        elif exponent.is_Number and base.is_Number and abs(float(exponent)) > 1e6:
            raise _Refused(f"the constant power is too large to compute (exponent {float(exponent):.3g})", node)
        if base == 0 and exponent.is_Number and float(exponent) < 0:
            raise _Refused("division by zero (zero to a negative power)", node)
        return self.real(self.library.pow(base, exponent), node)

    def number(self, node: ast.Constant) -> sympy.Expr:
        value = node.value
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            kind = "text" if isinstance(value, (str, bytes)) else repr(value)
            raise _Refused(f"{kind} is not a number; only numbers and declared names are allowed", node)
        if isinstance(value, float):
            if not math.isfinite(value):
                raise _Refused("the number is too large (not finite)", node)
            return self.library.real(value)
        return self.library.integer(value)

    def name(self, node: ast.Name) -> sympy.Expr:
        if node.id in self.names:
            return self.names[node.id]
        if node.id in CONSTANTS:
            return self.library.constants[node.id]
        if node.id in self.functions:
            raise _Refused(f"{node.id!r} is a function: call it, e.g. {node.id}(x)", node)
        if node.id in self.families:
            raise _Refused(f"{node.id!r} is an indexed family: name one entry, e.g. {node.id}[0]", node)
        if node.id in self.indices:
            raise _Refused(f"{node.id!r} is an index: use it inside brackets, e.g. u[{node.id}]", node)
        plain = [name for name in self.names if "[" not in name]
        hint = suggest(node.id, [*plain, *self.families]) or suggest(node.id, CONSTANTS)
        known = ", ".join(sorted(plain) + [f"{family}[0..{count - 1}]" for family, count in sorted(self.families.items())])
        raise _Refused(f"name {node.id!r} is not declared (declared names: {known or 'none'}){hint}", node)

    @property
    def families(self) -> dict[str, int]:
        """Indexed families among the names: family -> number of entries (``u[0]`` .. ``u[count - 1]``)."""
        if self._families is None:
            counts: dict[str, int] = {}
            for name in self.names:
                if name.endswith("]") and "[" in name:
                    family = name[: name.index("[")]
                    counts[family] = counts.get(family, 0) + 1
            self._families = counts
        return self._families

    def element(self, node: ast.Subscript) -> sympy.Expr:
        """``u[k]``: the declared name ``u[k]``, with k computed from whole numbers and index variables."""
        if not isinstance(node.value, ast.Name):
            raise _Refused("only a family name can be subscripted, e.g. u[i]", node)
        family = node.value.id
        if family not in self.families:
            known = ", ".join(sorted(self.families))
            raise _Refused(f"{family!r} is not an indexed family (families: {known}){suggest(family, self.families)}",
                           node.value)
        index = _index_value(node.slice, self.indices)
        key = element_name(family, index)
        if key not in self.names:
            values = ", ".join(f"{name} = {value}" for name, value in sorted(self.indices.items()))
            at = f" at {values}" if values else ""
            raise _Refused(f"{ast.get_source_segment(self.text, node) or family + '[...]'} is {key}{at}, outside "
                           f"{family}[0..{self.families[family] - 1}]; change the index or the range", node)
        return self.names[key]


    def call(self, node: ast.Call, depth: int) -> sympy.Expr:
        if not isinstance(node.func, ast.Name):
            if isinstance(node.func, ast.Attribute):
                raise _Refused("attribute access (a.b) is not allowed", node.func)
            raise _Refused("only calls of allowed functions by name are allowed, e.g. exp(x)", node)
        name = node.func.id
        if name not in self.functions:
            hint = suggest(name, self.functions)
            allowed = ", ".join(sorted(FUNCTIONS))
            raise _Refused(f"function {name!r} is not allowed (allowed: {allowed}){hint}", node.func)
        if node.keywords:
            raise _Refused(f"{name}() takes no keyword arguments", node.keywords[0].value)
        _, smallest, largest = self.functions[name]
        function = self.library.functions[name]
        count = len(node.args)
        if count < smallest or (largest is not None and count > largest):
            wanted = f"{smallest}" if largest == smallest else f"at least {smallest}"
            if largest is not None and largest != smallest:
                wanted = f"{smallest} to {largest}"
            raise _Refused(f"{name}() takes {wanted} argument{'s' if wanted != '1' else ''}, got {count}", node)
        arguments = [self.build(argument, depth + 1) for argument in node.args]
        if name == "log" and arguments[0] == 0:
            raise _Refused("log(0) is undefined", node)
        try:
            result = function(*arguments)
        except (ValueError, TypeError, ArithmeticError, RuntimeError) as error:
            raise _Refused(f"{self.segment(node)} cannot be formed: {' '.join(str(error).split())}", node) from None
        return self.real(result, node)

    def segment(self, node: ast.AST) -> str:
        text = ast.get_source_segment(self.text, node) or "the expression"
        return text if len(text) <= 40 else text[:37] + "..."

    def real(self, value, node: ast.AST):
        """``value`` if it has a symbol in it or is a real constant; a complex constant is refused."""
        if value.free_symbols:
            return value
        try:
            number = complex(value)
        except (TypeError, ValueError, ArithmeticError, RuntimeError):
            raise _Refused(f"the constant {self.segment(node)} has no numeric value", node) from None
        if not (math.isfinite(number.real) and math.isfinite(number.imag)):
            raise _Refused(f"the constant {self.segment(node)} is infinite or too large for double precision", node)
        if number.imag != 0.0:
            raise _Refused(f"the constant {self.segment(node)} is not a real number: check the "
                           "sign under sqrt, log and fractional powers, and the range of acos, asin, acosh "
                           "and atanh", node)
        return value
