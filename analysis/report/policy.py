"""Policies: a team's thresholds on report numbers, each rule giving pass, warn or fail.

A policy file (JSON or YAML)::

    {"name": "review rules",
     "rules": [
       {"metric": "expressibility.kl_corrected", "warn_above": 0.02, "fail_above": 0.05},
       {"metric": "entanglement.meyer_wallach", "fail_below": 0.5},
       {"metric": "trainability.barren_plateau", "expect": false},
       {"metric": "capacity.redundant", "fail_above": 2},
       {"metric": "trainability.points[qubits=8].variance", "fail_below": 1e-4,
        "judge": "interval"}]}

``metric`` is a path into the report: dotted keys, ``[k]`` for the k-th list item and
``[key=value]`` for the list item whose ``key`` equals ``value``. Numeric rules take
``fail_above``/``fail_below`` and optional ``warn_above``/``warn_below``; ``expect`` asks
for an exact value (true, false, a number or a string). With ``"judge": "interval"`` a
numeric rule on a value that has a 95% interval beside it (``interval`` or
``<name>_interval``) fails only when the whole interval is past the threshold, and warns
when the threshold lies inside the interval: the data cannot tell. A ``null`` value (an
undecided verdict, say) warns.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from typing import Any, Literal

from haarline.circuit.loading import decode_text
from haarline.circuit.model import _describe
from haarline.circuit.text import read_file
from haarline.errors import InputError, Problem, format_path
from haarline.report.options import METRICS
from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator

__all__ = [
    "Policy",
    "PolicyError",
    "Rule",
    "check_metrics",
    "evaluate_policy",
    "load_policy",
    "parse_policy",
    "worst_status",
]


class PolicyError(InputError):
    """A policy file is malformed, or names a number the report does not have."""


Number = float | int


class Rule(BaseModel):
    """One threshold on one report number."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    metric: str = Field(min_length=1, max_length=200, description="Path into the report.")
    fail_above: Number | None = None
    fail_below: Number | None = None
    warn_above: Number | None = None
    warn_below: Number | None = None
    expect: bool | Number | str | None = Field(
        default=None, description="Exact value asked for (true, false, a number or a string)."
    )
    judge: Literal["estimate", "interval"] = "estimate"
    note: str | None = Field(default=None, max_length=500)

    @model_validator(mode="after")
    def _one_kind(self) -> Rule:
        numeric = [self.fail_above, self.fail_below, self.warn_above, self.warn_below]
        if self.expect is None and all(v is None for v in numeric):
            raise ValueError(
                "give 'expect' or at least one of fail_above, fail_below, warn_above, warn_below"
            )
        if self.expect is not None and any(v is not None for v in numeric):
            raise ValueError("'expect' cannot be combined with numeric thresholds")
        for v in numeric:
            if v is not None and not math.isfinite(v):
                raise ValueError(f"thresholds must be finite numbers, got {v}")
        if (
            self.warn_above is not None
            and self.fail_above is not None
            and self.warn_above > self.fail_above
        ):
            raise ValueError("warn_above must not exceed fail_above")
        if (
            self.warn_below is not None
            and self.fail_below is not None
            and self.warn_below < self.fail_below
        ):
            raise ValueError("warn_below must not be below fail_below")
        return self


class Policy(BaseModel):
    """A named list of rules."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    name: str = Field(default="policy", max_length=200)
    rules: list[Rule] = Field(min_length=1, max_length=500)


_UNION_MEMBERS = ("float", "int", "bool", "str")
"""The member names pydantic appends to the location of a value of a union type."""


def parse_policy(data: Any, *, source: str | None = None) -> Policy:
    """Validate a decoded policy.

    Raises
    ------
    PolicyError
        Naming the field path, the value and what is allowed.
    """
    if not isinstance(data, dict):
        raise PolicyError(
            [Problem("(root)", f"expected an object, got {_describe(data)}")], source=source
        )
    try:
        return Policy.model_validate(data)
    except ValidationError as exc:
        problems: list[Problem] = []
        for err in exc.errors(include_url=False):
            loc = tuple(str(x) if not isinstance(x, int) else x for x in err["loc"])
            if len(loc) >= 4 and loc[-1] in _UNION_MEMBERS:  # one line per field, not per type
                loc = loc[:-1]
                msg = f"expected a number, got {_describe(err.get('input'))}"
            else:
                msg = err["msg"].removeprefix("Value error, ")
                if err["type"] == "extra_forbidden":
                    fields = Rule.model_fields if len(loc) > 1 else Policy.model_fields
                    msg = f"unknown key; allowed keys: {', '.join(fields)}"
                elif "input" in err and err["type"] != "missing":
                    msg = f"{msg} (got {_describe(err['input'])})"
            problem = Problem(format_path(loc), msg)
            if problem not in problems:
                problems.append(problem)
        raise PolicyError(problems, source=source) from exc


_OTHER_ROOTS = ("circuit", "sweep", "data")
"""Report keys besides the metrics that a rule may name."""


def check_metrics(policy: Policy, metrics: list[str], *, source: str | None = None) -> None:
    """Fail fast, before any sampling, when a rule needs a metric that will not be computed.

    Raises
    ------
    PolicyError
        Naming each rule and the metric to add.
    """
    known = METRICS
    problems = []
    for i, rule in enumerate(policy.rules):
        root = re.split(r"[.\[]", rule.metric, maxsplit=1)[0]
        if root not in known and root not in _OTHER_ROOTS:
            problems.append(
                Problem(
                    f"rules[{i}].metric",
                    f"{rule.metric!r} starts with {root!r}, which is not a part of the report; "
                    f"expected one of: {', '.join((*known, *_OTHER_ROOTS))}",
                )
            )
        elif root in known and root not in metrics:
            problems.append(
                Problem(
                    f"rules[{i}].metric",
                    f"{rule.metric!r} needs the {root} metric, which is not requested; add it "
                    f"to --metrics (now: {','.join(metrics)})",
                )
            )
    if problems:
        raise PolicyError(problems, source=source)


def load_policy(path: str) -> Policy:
    """Read a policy from a ``.json``, ``.yaml`` or ``.yml`` file."""
    kind = "yaml" if path.lower().endswith((".yaml", ".yml")) else "json"
    try:
        data = decode_text(read_file(path), kind=kind, source=path)
    except InputError as exc:
        raise PolicyError(exc.problems, source=path) from None
    return parse_policy(data, source=path)


_SEGMENT = re.compile(r"([A-Za-z_][A-Za-z0-9_]*)((?:\[[^\]]*\])*)")


def _resolve(report: dict[str, Any], path: str) -> tuple[Any, Any]:
    """The value at ``path`` and its parent container; raise KeyError with a reason."""
    node: Any = report
    parent: Any = None
    previous = "(report)"
    for part in path.split("."):
        m = _SEGMENT.fullmatch(part)
        if not m:
            raise KeyError(f"cannot read {part!r} in the path")
        key, selectors = m.group(1), m.group(2)
        if node is None:
            raise KeyError(
                f"{previous!r} is null: that metric was not computed (add it to --metrics)"
            )
        previous = key
        if not isinstance(node, dict) or key not in node:
            raise KeyError(f"the report has no {key!r} here")
        parent, node = node, node[key]
        if node is None and selectors:
            raise KeyError(f"{key!r} is null: that metric was not computed (add it to --metrics)")
        for sel in re.findall(r"\[([^\]]*)\]", selectors):
            if not isinstance(node, list):
                raise KeyError(f"{key!r} is not a list")
            if "=" in sel:
                field, want = (s.strip() for s in sel.split("=", 1))
                match = [
                    item
                    for item in node
                    if isinstance(item, dict) and field in item and str(item[field]) == want
                ]
                if not match:
                    raise KeyError(f"no item of {key!r} has {field} = {want}")
                parent, node = node, match[0]
            else:
                try:
                    parent, node = node, node[int(sel)]
                except (ValueError, IndexError):
                    raise KeyError(f"{key!r} has no item [{sel}]") from None
    return node, parent


def _interval_of(parent: Any, path: str) -> tuple[float, float] | None:
    name = path.split(".")[-1]
    m = _SEGMENT.fullmatch(name)
    name = m.group(1) if m else name
    if not isinstance(parent, dict):
        return None
    # kl_corrected is the centre of the expressibility interval (a plug-in kl is not)
    for key in (f"{name}_interval", "interval"):
        iv = parent.get(key)
        if isinstance(iv, list) and len(iv) == 2:
            return float(iv[0]), float(iv[1])
    return None


def _numeric(rule: Rule, value: float, iv: tuple[float, float] | None) -> tuple[str, str]:
    lo, hi = iv if iv is not None else (value, value)

    def above(threshold: float) -> str | None:
        if lo > threshold:
            return "yes"
        if hi > threshold:
            return "maybe"
        return None

    def below(threshold: float) -> str | None:
        if hi < threshold:
            return "yes"
        if lo < threshold:
            return "maybe"
        return None

    shown = f"{value:.4g}" + (f" (95% interval {lo:.4g} .. {hi:.4g})" if iv is not None else "")
    checks = [
        ("fail", "above", rule.fail_above, above),
        ("fail", "below", rule.fail_below, below),
        ("warn", "above", rule.warn_above, above),
        ("warn", "below", rule.warn_below, below),
    ]
    worst = ("pass", f"{shown} is within the thresholds")
    for level, side, threshold, test in checks:
        if threshold is None:
            continue
        verdict = test(threshold)
        if verdict == "yes":
            status = level
            text = f"{shown} is {side} the {level} threshold {threshold:g}"
        elif verdict == "maybe":
            status = "warn"
            text = f"{shown}: the interval reaches {side} the {level} threshold {threshold:g}"
        else:
            continue
        if _rank(status) > _rank(worst[0]):
            worst = (status, text)
    return worst


def _rank(status: str) -> int:
    return {"pass": 0, "warn": 1, "fail": 2}[status]


def worst_status(statuses: Iterable[str | None]) -> str | None:
    """The worst of some rule or policy statuses (``fail`` > ``warn`` > ``pass``).

    ``None`` entries (no policy) are left out; ``None`` when nothing is left.

    >>> worst_status(["pass", None, "warn"]), worst_status([None])
    ('warn', None)
    """
    return max((s for s in statuses if s is not None), key=_rank, default=None)


def evaluate_policy(policy: Policy, report: dict[str, Any]) -> dict[str, Any]:
    """Apply every rule to a report.

    Returns
    -------
    dict
        ``{"name", "status", "rules": [{"metric", "status", "value", "message"}, …]}`` with
        ``status`` the worst of the rules (fail > warn > pass).

    Raises
    ------
    PolicyError
        When a rule names a number the report does not have.
    """
    results = []
    problems = []
    for i, rule in enumerate(policy.rules):
        try:
            value, parent = _resolve(report, rule.metric)
        except KeyError as exc:
            problems.append(Problem(f"rules[{i}].metric", f"{rule.metric!r}: {exc.args[0]}"))
            continue
        if rule.expect is not None:
            if value is None:
                status, msg = "warn", f"the value is null (undecided); expected {rule.expect!r}"
            elif (
                value == rule.expect
                and type(value) is type(rule.expect)
                or (
                    isinstance(value, int | float)
                    and not isinstance(value, bool)
                    and not isinstance(rule.expect, bool)
                    and value == rule.expect
                )
            ):
                status, msg = "pass", f"{_describe(value)} as expected"
            else:
                status, msg = "fail", f"{_describe(value)}; expected {_describe(rule.expect)}"
        elif value is None:
            status, msg = "warn", "the value is null (not decided or not available)"
        elif isinstance(value, bool) or not isinstance(value, int | float):
            problems.append(
                Problem(
                    f"rules[{i}].metric",
                    f"{rule.metric!r} is {_describe(value)}, not a number; use 'expect'",
                )
            )
            continue
        else:
            iv = _interval_of(parent, rule.metric) if rule.judge == "interval" else None
            if rule.judge == "interval" and iv is None:
                problems.append(
                    Problem(f"rules[{i}].judge", f"{rule.metric!r} has no interval beside it")
                )
                continue
            status, msg = _numeric(rule, float(value), iv)
        results.append(
            {
                "metric": rule.metric,
                "status": status,
                "value": value,
                "message": msg,
                "note": rule.note,
            }
        )
    if problems:
        raise PolicyError(problems)
    worst = worst_status(r["status"] for r in results) or "pass"
    return {"name": policy.name, "status": worst, "rules": results}
