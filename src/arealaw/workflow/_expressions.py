"""Arithmetic on swept values in scenario files, evaluated safely (``ast``, never ``eval``).

A scenario value written as a string that starts with ``=`` is an expression of the family's
swept keys and variables, e.g. ``box = "= N // 2"`` or ``origin = ["= 12 - r", 0, 0]``.  Only
numbers, the names of swept keys, list literals, indexing of a list by a whole number, the
operators ``+ - * / // % **`` (and unary ``+ -``), parentheses and the functions
:data:`FUNCTIONS` are allowed; anything else is refused with the offending piece named.
"""

import ast
import math
import operator

__all__ = ["FUNCTIONS", "evaluate", "expression_names", "is_expression"]

_BINARY = {ast.Add: operator.add, ast.Sub: operator.sub, ast.Mult: operator.mul,
           ast.Div: operator.truediv, ast.FloorDiv: operator.floordiv, ast.Mod: operator.mod,
           ast.Pow: operator.pow}
_UNARY = {ast.UAdd: operator.pos, ast.USub: operator.neg}

#: Functions an expression may call.
FUNCTIONS = {"abs": abs, "ceil": math.ceil, "floor": math.floor, "int": int, "max": max,
             "min": min, "round": round, "sqrt": math.sqrt}

#: Largest exponent and magnitude of intermediate values: a scenario value never needs more,
#: and the limits keep ``10 ** 10 ** 10`` from hanging the parser.
MAX_EXPONENT = 64
MAX_MAGNITUDE = 1e15


def is_expression(value):
    """True for a string that starts with ``=`` (an expression), e.g. ``"= N // 2"``."""
    return isinstance(value, str) and value.lstrip().startswith("=")


def _parse(text):
    body = text.lstrip()[1:] if is_expression(text) else text
    try:
        return ast.parse(body.strip(), mode="eval").body
    except SyntaxError as exc:
        raise ValueError(f"expression {text!r} is not valid arithmetic ({exc.msg})") from None


def expression_names(text):
    """Names an expression refers to (besides the allowed functions).

    Examples
    --------
    >>> sorted(expression_names("= max(N // 2, r) + 1"))
    ['N', 'r']
    """
    tree = _parse(text)
    return {n.id for n in ast.walk(tree) if isinstance(n, ast.Name) and n.id not in FUNCTIONS}


def evaluate(text, names):
    """Value of the expression ``text`` with the swept values ``names`` (a dict).

    Examples
    --------
    >>> evaluate("= N // 2", {"N": 41})
    20
    >>> evaluate("= [12 - r, 12, 12]", {"r": 3})
    [9, 12, 12]
    >>> evaluate("= __import__('os')", {})
    Traceback (most recent call last):
    ...
    ValueError: expression "= __import__('os')": '__import__' is not a swept key or an allowed function (abs, ceil, floor, int, max, min, round, sqrt)
    """
    return _eval(_parse(text), names, text)


def _eval(node, names, text):
    def fail(msg):
        raise ValueError(f"expression {text!r}: {msg}")

    if isinstance(node, ast.Constant):
        if isinstance(node.value, bool) or not isinstance(node.value, (int, float)):
            fail(f"{node.value!r} is not a number")
        return node.value
    if isinstance(node, ast.Name):
        if node.id not in names:
            fail(f"{node.id!r} is not a swept key of this family; swept here: "
                 f"{', '.join(sorted(names)) or 'none'}")
        return names[node.id]
    if isinstance(node, ast.List):
        return [_eval(e, names, text) for e in node.elts]
    if isinstance(node, ast.BinOp) and type(node.op) in _BINARY:
        a, b = _eval(node.left, names, text), _eval(node.right, names, text)
        if isinstance(a, list) or isinstance(b, list):
            fail("arithmetic works on numbers, not lists; write one expression per element")
        if isinstance(node.op, ast.Pow) and abs(b) > MAX_EXPONENT:
            fail(f"exponent {b!r} is larger than {MAX_EXPONENT}")
        try:
            value = _BINARY[type(node.op)](a, b)
        except ZeroDivisionError:
            fail("division by zero")
        if isinstance(value, complex) or abs(value) > MAX_MAGNITUDE:
            fail(f"value {value!r} is not a real number below {MAX_MAGNITUDE:g}")
        return value
    if isinstance(node, ast.UnaryOp) and type(node.op) in _UNARY:
        value = _eval(node.operand, names, text)
        if isinstance(value, list):
            fail("a sign applies to numbers, not lists")
        return _UNARY[type(node.op)](value)
    if isinstance(node, ast.Subscript):
        seq, idx = _eval(node.value, names, text), _eval(node.slice, names, text)
        if not isinstance(seq, list) or isinstance(idx, bool) or not isinstance(idx, int):
            fail("indexing needs a list and a whole-number index, e.g. shape[0]")
        if not -len(seq) <= idx < len(seq):
            fail(f"index {idx} is outside a list of {len(seq)} values")
        return seq[idx]
    if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and not node.keywords:
        if node.func.id not in FUNCTIONS:
            fail(f"{node.func.id!r} is not a swept key or an allowed function "
                 f"({', '.join(sorted(FUNCTIONS))})")
        args = [_eval(a, names, text) for a in node.args]
        if any(isinstance(a, list) for a in args):
            fail(f"{node.func.id}() takes numbers, not lists")
        try:
            return FUNCTIONS[node.func.id](*args)
        except (TypeError, ValueError) as exc:
            fail(f"{node.func.id}(): {exc}")
    if isinstance(node, ast.Call) and isinstance(node.func, ast.Name):
        fail(f"{node.func.id}() takes no keyword arguments")
    fail(f"{ast.unparse(node)!r} is not allowed (numbers, swept keys, + - * / // % **, "
         f"parentheses, lists, {', '.join(sorted(FUNCTIONS))})")
