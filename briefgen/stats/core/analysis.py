"""What an analysis is: frozen parameters, a plan from the spec, one call on the frame.

In the spirit of seaborn's objects interface: each analysis is a small frozen
dataclass whose fields are its parameters, with one call that computes. An
analysis class also says how its results appear in stats.json (``name``, and
``many`` when it gives a list) and which result type it returns, so the registry
in ``briefgen.stats`` is a plain tuple of classes and stats.json, the README
reference and the brief's sections follow from it.

Example::

    for analysis in GroupAnalysis.plan(spec, frame):
        result = analysis(frame)        # a GroupResult, with .key and .usage
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, ClassVar, Protocol

if TYPE_CHECKING:
    import ibis.expr.types as ir

    from briefgen.config import BriefSpec
    from briefgen.stats.core.frame import AnalysisFrame
    from briefgen.stats.core.usage import RowUsage


class Result(Protocol):
    """Every result names its place in the brief and the rows it used."""

    key: str
    usage: RowUsage


class Analysis(Protocol):
    """An analysis family: parameters as fields, ``plan`` from the spec, call on the frame."""

    name: ClassVar[str]
    many: ClassVar[bool]
    result: ClassVar[type]

    @classmethod
    def plan(cls, spec: BriefSpec, frame: AnalysisFrame) -> tuple[Analysis, ...]: ...

    def __call__(self, frame: AnalysisFrame) -> Result | tuple[Result, ...] | None: ...


def one_row(table: ir.Table, expressions: dict[str, Any]) -> dict[str, Any]:
    """Run one aggregate query over ``table`` and return its single row; {} if nothing to ask."""
    if not expressions:
        return {}
    return table.aggregate(**expressions).to_pyarrow().to_pylist()[0]
