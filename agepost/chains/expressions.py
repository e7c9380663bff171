"""Safe arithmetic expressions of chain columns, for derived input parameters.

An expression such as ``(omega_b + omega_c) / (H0 / 100) ** 2`` is parsed with :mod:`ast`
and checked against an allow-list before anything is computed: numbers, column names,
``+ - * / **``, unary minus and plus, parentheses, and the functions ``sqrt``, ``log``
(natural) and ``exp``. Anything else (attribute access, subscripts, other calls,
comparisons, strings) is refused with a message. Nothing is ever passed to ``eval``.
"""

from __future__ import annotations

import ast
import dataclasses
import difflib
from collections.abc import Callable, Collection, Mapping
from typing import Any, cast

import numpy as np
from numpy.typing import NDArray

from agepost.errors import ChainFormatError

#: Functions an expression may call, each of one argument.
FUNCTIONS: dict[str, Callable[..., Any]] = {"sqrt": np.sqrt, "log": np.log, "exp": np.exp}

_BINARY: dict[type, Callable[..., Any]] = {
    ast.Add: np.add,
    ast.Sub: np.subtract,
    ast.Mult: np.multiply,
    ast.Div: np.true_divide,
    ast.Pow: np.power,
}
_UNARY: dict[type, Callable[..., Any]] = {ast.USub: np.negative, ast.UAdd: np.positive}


@dataclasses.dataclass(frozen=True)
class Expression:
    """A checked expression: its text and the column names it reads."""

    text: str
    columns: tuple[str, ...]
    tree: ast.Expression = dataclasses.field(repr=False, compare=False)

    def evaluate(self, columns: Mapping[str, NDArray]) -> NDArray[np.float64]:
        """Value for every row, shape (n_rows,); invalid operations give NaN, not errors."""
        missing = [c for c in self.columns if c not in columns]
        if missing:
            raise ChainFormatError(
                f"expression {self.text!r} reads column {missing[0]!r}, which the chain lacks"
                f"{_suggest(missing[0], columns)}"
            )
        with np.errstate(all="ignore"):
            value = _evaluate(self.tree.body, columns)
        n_rows = len(next(iter(columns.values()))) if columns else 1
        return np.broadcast_to(np.asarray(value, dtype=float), (n_rows,)).copy()


def parse_expression(text: str, *, where: str = "expression") -> Expression:
    """Parse and check ``text`` against the allow-list.

    Raises
    ------
    ChainFormatError
        A syntax error or anything outside the allow-list, named in the message.
    """
    try:
        tree = ast.parse(text.strip(), mode="eval")
    except SyntaxError as error:
        raise ChainFormatError(
            f"{where}: {text!r} is not a valid arithmetic expression ({error.msg}); "
            "use numbers, column names, + - * / **, parentheses, sqrt, log, exp"
        ) from None
    columns: list[str] = []
    _check(tree.body, text, where, columns)
    return Expression(text=text, columns=tuple(dict.fromkeys(columns)), tree=tree)


def is_plain_name(text: str) -> bool:
    """True when ``text`` is a single identifier (a column name, not an expression)."""
    return text.strip().isidentifier()


def _check(node: ast.AST, text: str, where: str, columns: list[str]) -> None:
    """Walk the tree; raise on the first node that is not allowed."""
    if (
        isinstance(node, ast.Constant)
        and isinstance(node.value, int | float)
        and not isinstance(node.value, bool)
    ):
        return
    if isinstance(node, ast.Name):
        if node.id in FUNCTIONS:
            raise ChainFormatError(
                f"{where}: in {text!r}, {node.id} must be called, as {node.id}(x)"
            )
        columns.append(node.id)
        return
    if isinstance(node, ast.BinOp) and type(node.op) in _BINARY:
        _check(node.left, text, where, columns)
        _check(node.right, text, where, columns)
        return
    if isinstance(node, ast.UnaryOp) and type(node.op) in _UNARY:
        _check(node.operand, text, where, columns)
        return
    if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id in FUNCTIONS:
        if len(node.args) != 1 or node.keywords:
            raise ChainFormatError(
                f"{where}: in {text!r}, {node.func.id} takes exactly one argument"
            )
        _check(node.args[0], text, where, columns)
        return
    piece = ast.get_source_segment(text.strip(), node) or type(node).__name__
    raise ChainFormatError(
        f"{where}: {piece!r} in {text!r} is not allowed; expressions may use numbers, column "
        f"names, + - * / **, unary minus, parentheses and {', '.join(FUNCTIONS)}"
    )


def _evaluate(node: ast.AST, columns: Mapping[str, NDArray]) -> NDArray | float:
    """Value of a checked node."""
    if isinstance(node, ast.Constant):
        return float(cast(float, node.value))
    if isinstance(node, ast.Name):
        return np.asarray(columns[node.id], dtype=float)
    if isinstance(node, ast.BinOp):
        return _BINARY[type(node.op)](_evaluate(node.left, columns), _evaluate(node.right, columns))
    if isinstance(node, ast.UnaryOp):
        return _UNARY[type(node.op)](_evaluate(node.operand, columns))
    if isinstance(node, ast.Call) and isinstance(node.func, ast.Name):
        return FUNCTIONS[node.func.id](_evaluate(node.args[0], columns))
    raise ChainFormatError(f"unchecked expression node {type(node).__name__}")


def _suggest(name: str, choices: Collection[str]) -> str:
    close = difflib.get_close_matches(name, list(choices), n=1, cutoff=0.6)
    if close:
        return f"; did you mean {close[0]!r}?"
    return f"; columns are {', '.join(choices)}"
