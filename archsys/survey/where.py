"""The ``--where`` selection language and plain-decimal number parsing of catalogue cells.

Selection language (``--where``)
--------------------------------
A small expression language, parsed by hand (nothing is ever passed to
``eval``)::

    expr     := term { ("or" | "||") term }
    term     := factor { ("and" | "&&") factor }
    factor   := ("not" | "!") factor | "(" expr ")" | agg | comparison
    agg      := ("any" | "all") "(" expr ")" | "count" "(" expr ")" OP operand
    comparison := operand OP operand          OP: == != < <= > >=
    operand  := NAME | `quoted name` | NUMBER | 'string' | "string" | true | false

A NAME is a system variable (``n_planets``: rows of the system in the table;
``system``: its id), an alias from the column map (``[aliases]``), an archsys
field name (``transiting``, ``period``, ``star_mass``: the column it is mapped
to) or a column of the table.  An unknown bare word facing a known name is a
string (``method==Transit``); two unknown names are an error.  Values are the
cells as they are in the table (no unit conversion).  Strings compare without
regard to case; a cell and a literal that both read as numbers compare as
numbers; any comparison with an empty cell is false.

The expression is evaluated for every row of a system; the system is selected
when it holds for all of its rows.  ``any(...)``, ``all(...)`` and
``count(...)`` look at all rows of the system, e.g.
``n_planets>=3 and any(method==Transit)`` or ``count(transiting==1)>=2``.
Several ``--where`` options must all hold.

Numbers in cells are plain decimal notation with ASCII digits
(:func:`parse_number`): ``1_0``, ``0x10`` and non-ASCII digits are text.

Limits (:mod:`archsys.limits`): an expression has at most 100 000 characters
and 100 levels of parentheses, ``not`` and ``any(``/``all(``/``count(``;
``and``/``or`` chains are stored flat (``("or", [a, b, c, ...])``), so a long
chain is neither parsed nor evaluated recursively.
"""
from __future__ import annotations

import difflib
import math
import re

from ..errors import InputError
from ..limits import MAX_EXPRESSION_CHARS, MAX_EXPRESSION_NESTING

__all__ = ["parse_where", "select", "evaluate", "as_bool", "parse_number", "SYSTEM_VARS", "kept_by_any", "any_note"]


# --------------------------------------------------------------------------
# The selection language
# --------------------------------------------------------------------------

_TOKEN = re.compile(r"""\s*(?:
    (?P<num>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)(?![A-Za-z_])
  | (?P<str>'[^']*'|"[^"]*")
  | (?P<quoted>`[^`]+`)
  | (?P<op>==|!=|<=|>=|<|>|&&|\|\||!|\(|\)|=)
  | (?P<name>[A-Za-z_][A-Za-z0-9_.:-]*)
)""", re.X)
_CMP = ("==", "!=", "<", "<=", ">", ">=")
_KEYWORDS = {"and", "or", "not", "any", "all", "count", "true", "false"}
SYSTEM_VARS = ("n_planets", "system")


def _tokenize(expr, where):
    pos, out = 0, []
    expr = expr.rstrip()
    while pos < len(expr):
        m = _TOKEN.match(expr, pos)
        if not m or m.end() == pos:
            raise InputError(f"{where}: cannot read {expr[pos:pos + 12]!r} at character {pos + 1}")
        kind = m.lastgroup
        text = m.group(kind)
        if kind == "op" and text == "=":
            raise InputError(f"{where}: use '==' to compare, not '='")
        if kind == "name" and text.lower() in _KEYWORDS:
            kind, text = "kw", text.lower()
        out.append((kind, text))
        pos = m.end()
    return out


class _Parser:
    def __init__(self, expr, names, where):
        self.where = where = where if len(where) <= 100 else where[:96] + "...'"
        if len(expr) > MAX_EXPRESSION_CHARS:
            raise InputError(f"{where}: {len(expr)} characters; an expression may have at most "
                             f"{MAX_EXPRESSION_CHARS}")
        self.toks = _tokenize(expr, where)
        self.i = 0
        self.depth = 0
        self.names = names       # name -> resolved key

    def _enter(self):
        self.depth += 1
        if self.depth > MAX_EXPRESSION_NESTING:
            raise InputError(f"{self.where}: nested more than {MAX_EXPRESSION_NESTING} levels "
                             f"(parentheses, not, any/all/count)")

    def peek(self):
        return self.toks[self.i] if self.i < len(self.toks) else (None, None)

    def take(self, *texts):
        kind, text = self.peek()
        if text in texts and kind in ("op", "kw"):
            self.i += 1
            return text
        return None

    def expect(self, text):
        if not self.take(text):
            got = self.peek()[1]
            raise InputError(f"{self.where}: expected '{text}'" + (f", got '{got}'" if got else " at the end"))

    def parse(self):
        if not self.toks:
            raise InputError(f"{self.where}: empty expression")
        node = self.expr()
        if self.i < len(self.toks):
            raise InputError(f"{self.where}: unexpected '{self.peek()[1]}'")
        return node

    def expr(self):
        parts = [self.term()]
        while self.take("or", "||"):
            parts.append(self.term())
        return parts[0] if len(parts) == 1 else ("or", parts)

    def term(self):
        parts = [self.factor()]
        while self.take("and", "&&"):
            parts.append(self.factor())
        return parts[0] if len(parts) == 1 else ("and", parts)

    def factor(self):
        self._enter()
        try:
            return self._factor()
        finally:
            self.depth -= 1

    def _factor(self):
        if self.take("not", "!"):
            return ("not", self.factor())
        if self.take("("):
            node = self.expr()
            self.expect(")")
            return node
        agg = self.take("any", "all", "count")
        if agg:
            self.expect("(")
            inner = self.expr()
            self.expect(")")
            if agg != "count":
                return ("agg", agg, inner)
            op = self.take(*_CMP)
            if not op:
                raise InputError(f"{self.where}: count(...) needs a comparison, e.g. count(...)>=2")
            kind, text = self.peek()
            if kind != "num":
                raise InputError(f"{self.where}: count(...) compares with a number; got {text!r}")
            self.i += 1
            return ("count", inner, op, float(text))
        return self.comparison()

    def operand(self):
        kind, text = self.peek()
        if kind is None:
            raise InputError(f"{self.where}: expression ends where a value was expected")
        self.i += 1
        if kind == "num":
            return ("num", float(text))
        if kind == "str":
            return ("str", text[1:-1])
        if kind == "quoted":
            return ("name", text[1:-1])
        if kind == "name":
            return ("name", text)
        if kind == "kw" and text in ("true", "false"):
            return ("bool", text == "true")
        raise InputError(f"{self.where}: expected a column or a value, got '{text}'")

    def _resolve(self, opnd):
        if opnd[0] == "name" and opnd[1] in self.names:
            return ("var", self.names[opnd[1]])
        return opnd

    def comparison(self):
        left = self.operand()
        op = self.take(*_CMP)
        if not op:
            got = self.peek()[1]
            raise InputError(f"{self.where}: expected a comparison like n_planets>=2"
                             + (f" after {left[1]!r}, got '{got}'" if got else f" after {left[1]!r}"))
        right = self.operand()
        left, right = self._resolve(left), self._resolve(right)
        if left[0] != "var" and right[0] != "var":
            unknown = left if left[0] == "name" else right
            if unknown[0] == "name":
                close = difflib.get_close_matches(unknown[1], list(self.names), n=1, cutoff=0.6)
                hint = f" (did you mean '{close[0]}'?)" if close else ""
                raise InputError(f"{self.where}: unknown column '{unknown[1]}'{hint}")
            raise InputError(f"{self.where}: compares two constants; name a column")
        # a bare unknown word facing a variable is a string literal
        left = ("str", left[1]) if left[0] == "name" else left
        right = ("str", right[1]) if right[0] == "name" else right
        return ("cmp", op, left, right)


def parse_where(expr: str, names: dict, where: str | None = None):
    """Parse one selection expression into a small tuple tree (see module docstring).

    ``names`` maps every usable name to its key: ``("sys", "n_planets")`` or
    ``("col", column)``.
    """
    return _Parser(expr, names, where or f"--where {expr!r}").parse()


_TRUE = {"1", "true", "t", "yes", "y"}
_FALSE = {"0", "false", "f", "no", "n"}


#: Plain decimal notation, ASCII digits only ('1_0', '١٠' and '0x10' are not numbers).
_DECIMAL = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?|[+-]?(?:inf|infinity|nan)", re.I | re.A)


def parse_number(x):
    """float of a cell in plain decimal notation (or a Python number); None otherwise."""
    if isinstance(x, bool):
        return None
    if isinstance(x, (int, float)):
        return float(x)
    try:
        import numpy as np
        if isinstance(x, np.number):
            return float(x)
    except ImportError:  # pragma: no cover
        pass
    if not isinstance(x, str):
        return None
    s = x.strip()
    if not _DECIMAL.fullmatch(s):
        return None
    try:
        return float(s)
    except (OverflowError, ValueError):  # pragma: no cover - the pattern admits only floats
        return None


def _num(x):
    if isinstance(x, bool):
        return float(x)
    v = parse_number(x)
    return None if v is None or math.isnan(v) else v


def as_bool(x):
    """Truth value of a cell (1/0, true/false, yes/no), or None."""
    if x is None:
        return None
    if isinstance(x, bool):
        return x
    v = _num(x)
    if v is not None:
        return True if v == 1 else False if v == 0 else None
    s = str(x).strip().lower()
    return True if s in _TRUE else False if s in _FALSE else None


def _compare(op, a, b):
    if op == "==":
        return a == b
    if op == "!=":
        return a != b
    if op == "<":
        return a < b
    if op == "<=":
        return a <= b
    if op == ">":
        return a > b
    return a >= b


def _value(opnd, row, sysvars):
    kind, val = opnd
    if kind != "var":
        return opnd
    scope, key = val
    x = sysvars.get(key) if scope == "sys" else row.get(key)
    return ("cell", x)


def _cmp(op, a, b):
    """Compare two operands ('cell', x) / ('num', v) / ('str', s) / ('bool', b)."""
    (ka, xa), (kb, xb) = a, b
    if xa is None or xb is None:
        return False
    if ka == "bool" or kb == "bool":
        va = xa if ka == "bool" else as_bool(xa)
        vb = xb if kb == "bool" else as_bool(xb)
        if va is None or vb is None or op not in ("==", "!="):
            return False
        return _compare(op, va, vb)
    na, nb = _num(xa), _num(xb)
    if na is not None and nb is not None and not (ka == "str" and kb == "str"):
        return _compare(op, na, nb)
    if ka == "num" or kb == "num":
        return False            # a number against a non-numeric cell
    return _compare(op, str(xa).casefold(), str(xb).casefold())


def evaluate(node, rows, i, sysvars):
    """Truth of ``node`` for row ``i`` of ``rows`` (list of cell dicts)."""
    kind = node[0]
    if kind == "or":
        return any(evaluate(n, rows, i, sysvars) for n in node[1])
    if kind == "and":
        return all(evaluate(n, rows, i, sysvars) for n in node[1])
    if kind == "not":
        return not evaluate(node[1], rows, i, sysvars)
    if kind == "agg":
        hits = (evaluate(node[2], rows, j, sysvars) for j in range(len(rows)))
        return any(hits) if node[1] == "any" else all(hits)
    if kind == "count":
        n = sum(1 for j in range(len(rows)) if evaluate(node[1], rows, j, sysvars))
        return _compare(node[2], float(n), node[3])
    _, op, left, right = node
    return _cmp(op, _value(left, rows[i], sysvars), _value(right, rows[i], sysvars))


def select(group, nodes) -> bool:
    """True when every expression holds for every row of the system."""
    if not nodes:
        return True                 # no expression: the rows are not unpacked
    rows = [r for _, r in group.rows]
    sysvars = {"n_planets": group.n_planets, "system": group.system}
    return all(evaluate(n, rows, i, sysvars) for n in nodes for i in range(len(rows)))


def _bare(node):
    """Whether a parsed expression reads the current row outside any any()/all()/count()."""
    kind = node[0]
    if kind in ("or", "and"):
        return _bare(node[1]) or _bare(node[2])
    if kind == "not":
        return _bare(node[1])
    if kind in ("agg", "count"):
        return False
    return True                     # a comparison evaluated on the current row


def kept_by_any(groups, exprs, nodes):
    """[(expression, n)]: for each --where expression with a bare comparison, the number of systems it
    drops although ``any(expression)`` would keep them (it holds on some rows of the system, not all)."""
    out = []
    for expr, node in zip(exprs, nodes):
        if not _bare(node):
            continue
        n = 0
        for g in groups:
            rows = [r for _, r in g.rows]
            if not rows:
                continue
            sysvars = {"n_planets": g.n_planets, "system": g.system}
            hits = [evaluate(node, rows, i, sysvars) for i in range(len(rows))]
            n += any(hits) and not all(hits)
        if n:
            out.append((expr, n))
    return out


def any_note(expr, n):
    """The one-line note of :func:`kept_by_any`."""
    return (f"--where {expr!r} must hold on every row of a system (README, 'Selecting systems'); it drops "
            f"{n} system{'s' if n != 1 else ''} where it holds on some rows only: write 'any({expr})' to keep them")
