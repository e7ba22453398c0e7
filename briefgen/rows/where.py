"""The ``where`` language: a small grammar for choosing rows, parsed without ``eval``.

Grammar (keywords in any case; ``#`` has no meaning)::

    condition  := either
    either     := both ("or" both)*
    both       := negated ("and" negated)*
    negated    := "not" negated | test
    test       := "(" condition ")"
                | value comparison value
                | value ["not"] "in" "(" literal ("," literal)* ")"
                | value ["not"] "between" value "and" value
                | value "is" ["not"] "missing"
    comparison := "=" | "==" | "!=" | "<>" | "<" | "<=" | ">" | ">="
    value      := column | literal
    column     := name | "double-quoted name"
    literal    := number | 'single-quoted text' | date | true | false
    date       := 2026-07-01 | 2026-07-01T14:05 | date '2026-07-01'

A row whose condition cannot be decided (a comparison with an empty cell) is left
out, as in SQL; ``is missing`` selects such rows on purpose.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass

from briefgen.errors import ConfigError

COMPARISONS = {
    "=": "=",
    "==": "=",
    "!=": "!=",
    "<>": "!=",
    "<": "<",
    "<=": "<=",
    ">": ">",
    ">=": ">=",
}
KEYWORDS = {"and", "or", "not", "in", "is", "missing", "between", "true", "false", "date"}


@dataclass(frozen=True, slots=True)
class Column:
    name: str
    position: int


@dataclass(frozen=True, slots=True)
class Literal:
    """A number (float), text (str), date or time (datetime) or truth value (bool)."""

    value: float | str | dt.datetime | bool
    position: int


Value = Column | Literal


@dataclass(frozen=True, slots=True)
class Compare:
    left: Value
    operator: str
    right: Value


@dataclass(frozen=True, slots=True)
class InList:
    value: Value
    options: tuple[Literal, ...]
    negated: bool


@dataclass(frozen=True, slots=True)
class Between:
    value: Value
    low: Value
    high: Value
    negated: bool


@dataclass(frozen=True, slots=True)
class IsMissing:
    value: Value
    negated: bool


@dataclass(frozen=True, slots=True)
class Logical:
    operator: str  # "and" or "or"
    parts: tuple[Condition, ...]


@dataclass(frozen=True, slots=True)
class Not:
    part: Condition


Condition = Compare | InList | Between | IsMissing | Logical | Not


@dataclass(frozen=True, slots=True)
class Token:
    kind: str  # name, quoted_name, text, number, date, symbol, keyword, end
    text: str
    position: int  # 0-based character offset


_TOKEN = re.compile(
    r"""
    (?P<space>\s+)
  | (?P<date>\d{4}-\d{2}-\d{2}(?:[T ]\d{2}:\d{2}(?::\d{2})?)?(?![\w.]))
  | (?P<number>[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?(?![\w.]))
  | (?P<name>[^\W\d]\w*)
  | (?P<text>'(?:[^']|'')*')
  | (?P<quoted_name>"(?:[^"]|"")*")
  | (?P<symbol><=|>=|<>|!=|==|[=<>(),])
    """,
    re.VERBOSE,
)


class WhereError(ConfigError):
    """A ``where`` condition that does not parse; says where and what was expected."""

    def __init__(self, source: str, position: int, expected: str, found: str) -> None:
        self.position = position
        super().__init__(
            f"at character {position + 1} ({_context(source, position)}): expected {expected}, "
            f"found {found}"
        )


def _context(source: str, position: int) -> str:
    start = max(0, position - 12)
    shown = source[start : position + 12].replace("\n", " ")
    return f"'{'…' if start else ''}{shown}{'…' if position + 12 < len(source) else ''}'"


def tokenize(source: str) -> list[Token]:
    tokens: list[Token] = []
    position = 0
    while position < len(source):
        found = _TOKEN.match(source, position)
        if found is None:
            raise WhereError(
                source, position, "a column, a value or an operator", f"'{source[position]}'"
            )
        kind = found.lastgroup or "space"
        text = found.group()
        if kind == "name" and text.lower() in KEYWORDS:
            kind, text = "keyword", text.lower()
        if kind != "space":
            tokens.append(Token(kind, text, position))
        position = found.end()
    tokens.append(Token("end", "", len(source)))
    return tokens


def _describe(token: Token) -> str:
    return "the end of the condition" if token.kind == "end" else f"'{token.text}'"


def parse_date(text: str) -> dt.datetime | None:
    """An ISO date or date and time (``2026-07-01``, ``2026-07-01 14:05``), else None."""
    try:
        return dt.datetime.fromisoformat(text)
    except ValueError:
        return None


class _Parser:
    def __init__(self, source: str) -> None:
        self.source = source
        self.tokens = tokenize(source)
        self.at = 0

    @property
    def token(self) -> Token:
        return self.tokens[self.at]

    def take(self) -> Token:
        token = self.token
        self.at += 1
        return token

    def accept(self, kind: str, text: str | None = None) -> Token | None:
        token = self.token
        if token.kind == kind and (text is None or token.text == text):
            return self.take()
        return None

    def expect(self, kind: str, text: str, expected: str) -> Token:
        token = self.accept(kind, text)
        if token is None:
            self.fail(expected)
        return token

    def fail(self, expected: str) -> None:
        raise WhereError(self.source, self.token.position, expected, _describe(self.token))

    def condition(self) -> Condition:
        parts = [self.both()]
        while self.accept("keyword", "or"):
            parts.append(self.both())
        return parts[0] if len(parts) == 1 else Logical("or", tuple(parts))

    def both(self) -> Condition:
        parts = [self.negated()]
        while self.accept("keyword", "and"):
            parts.append(self.negated())
        return parts[0] if len(parts) == 1 else Logical("and", tuple(parts))

    def negated(self) -> Condition:
        if self.accept("keyword", "not"):
            return Not(self.negated())
        return self.test()

    def test(self) -> Condition:
        if self.accept("symbol", "("):
            inner = self.condition()
            self.expect("symbol", ")", "')' to close the '('")
            return inner
        left = self.value("a column or a value")
        token = self.token
        if token.kind == "symbol" and token.text in COMPARISONS:
            self.take()
            return Compare(
                left, COMPARISONS[token.text], self.value(f"a value after '{token.text}'")
            )
        if self.accept("keyword", "is"):
            negated = self.accept("keyword", "not") is not None
            self.expect("keyword", "missing", "'missing' after 'is'")
            return IsMissing(left, negated)
        negated = self.accept("keyword", "not") is not None
        if self.accept("keyword", "in"):
            return InList(left, self.options(), negated)
        if self.accept("keyword", "between"):
            low = self.value("a value after 'between'")
            self.expect("keyword", "and", "'and' between the two ends of 'between'")
            return Between(left, low, self.value("a value after 'and'"), negated)
        self.fail(
            "'in' or 'between' after 'not'"
            if negated
            else "a comparison (=, !=, <, <=, >, >=), 'in', 'between' or 'is missing'"
        )
        raise AssertionError  # fail always raises

    def options(self) -> tuple[Literal, ...]:
        self.expect("symbol", "(", "'(' to start the list after 'in'")
        options = [self.literal("a value in the list")]
        while self.accept("symbol", ","):
            options.append(self.literal("a value after ','"))
        self.expect("symbol", ")", "',' or ')' to end the list")
        return tuple(options)

    def value(self, expected: str) -> Value:
        token = self.token
        if token.kind == "name":
            self.take()
            return Column(token.text, token.position)
        if token.kind == "quoted_name":
            self.take()
            return Column(token.text[1:-1].replace('""', '"'), token.position)
        return self.literal(expected)

    def literal(self, expected: str) -> Literal:
        token = self.token
        if token.kind == "number":
            self.take()
            return Literal(float(token.text), token.position)
        if token.kind == "text":
            self.take()
            return Literal(token.text[1:-1].replace("''", "'"), token.position)
        if token.kind == "date":
            self.take()
            return self._date(token, token.text)
        if token.kind == "keyword" and token.text in ("true", "false"):
            self.take()
            return Literal(token.text == "true", token.position)
        if token.kind == "keyword" and token.text == "date":
            self.take()
            quoted = self.token
            if quoted.kind != "text":
                self.fail("a quoted date after 'date', such as date '2026-07-01'")
            self.take()
            return self._date(quoted, quoted.text[1:-1], token.position)
        self.fail(expected)
        raise AssertionError

    def _date(self, token: Token, text: str, position: int | None = None) -> Literal:
        when = parse_date(text)
        if when is None:
            raise WhereError(self.source, token.position, "a date such as 2026-07-01", f"'{text}'")
        return Literal(when, token.position if position is None else position)


def parse_where(source: str) -> Condition:
    """The condition tree of ``source``; a ``WhereError`` names the position and what was expected."""
    if not source.strip():
        raise WhereError(source, 0, "a condition such as distance_km < 10", "nothing")
    parser = _Parser(source)
    tree = parser.condition()
    if parser.token.kind != "end":
        parser.fail("'and', 'or' or the end of the condition")
    return tree


def columns_of(tree: Condition) -> list[Column]:
    """Every column the condition names, in the order written."""
    if isinstance(tree, Compare):
        found = [tree.left, tree.right]
    elif isinstance(tree, InList | IsMissing):
        found = [tree.value]
    elif isinstance(tree, Between):
        found = [tree.value, tree.low, tree.high]
    elif isinstance(tree, Not):
        return columns_of(tree.part)
    else:
        return [column for part in tree.parts for column in columns_of(part)]
    return [value for value in found if isinstance(value, Column)]
