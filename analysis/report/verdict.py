"""One verdict for the reader: where two analyses disagree, which stands; the banner colour.

The sampled trainability scan judges the circuit as written (its depth, the scanned qubit
counts); the dynamical Lie algebra predicts deep versions of it (Ragone et al., Nat.
Commun. 2024), and only when the observable or the input state lies in the algebra. When
both ran, :func:`joint_verdict` says in one sentence which of the two answers the user's
question and why. :func:`banner` gives the colour of a report page's banner by the rule
stated in its docstring (also in the README).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal

__all__ = ["FAR_FROM_HAAR", "NO_ENTANGLEMENT", "Banner", "banner", "joint_verdict"]

FAR_FROM_HAAR = 0.2
"""KL (nats) above which, for the whole 95% interval, a circuit is called far from Haar."""

NO_ENTANGLEMENT = 0.05
"""Meyer-Wallach value below which, for the whole 95% interval, there is no entanglement."""


def _scan_words(t: dict[str, Any]) -> str:
    sizes = [p["qubits"] for p in t.get("points") or []]
    span = f"n = {sizes[0]}..{sizes[-1]}" if sizes else "its own size"
    verdict = {True: "a barren plateau", False: "no barren plateau", None: "no verdict"}[
        t.get("barren_plateau")
    ]
    return f"the sampled scan of the circuit as written ({span}) finds {verdict}"


def joint_verdict(report: dict[str, Any]) -> str | None:
    """One sentence reconciling the trainability scan and the Lie diagnosis, if both ran.

    Examples
    --------
    >>> r = {"trainability": {"barren_plateau": True, "points": [{"qubits": 2}, {"qubits": 8}]},
    ...      "lie": {"growth": {"better": "polynomial"}, "points": [{"prediction":
    ...          {"applies": False, "reason": "the observable lies outside the algebra"}}]}}
    >>> print(joint_verdict(r))  # doctest: +NORMALIZE_WHITESPACE
    The sampled scan stands: the sampled scan of the circuit as written (n = 2..8) finds a
    barren plateau; the Lie-algebra prediction does not apply here (the observable lies
    outside the algebra), so the algebra's polynomial growth says nothing about this
    circuit's gradients.
    """
    t, lie = report.get("trainability"), report.get("lie")
    if not t or not lie:
        return None
    growth = (lie.get("growth") or {}).get("better")
    grows = f"{growth} growth" if growth else "dimension"
    predictions = [p.get("prediction") or {} for p in lie.get("points") or []]
    applies = [p for p in predictions if p.get("applies")]
    scan = _scan_words(t)
    if not applies:
        reasons = [p["reason"] for p in predictions if p.get("reason")]
        why = f" ({reasons[0]})" if reasons else ""
        return (
            f"The sampled scan stands: {scan}; the Lie-algebra prediction does not apply "
            f"here{why}, so the algebra's {grows} says nothing about this circuit's gradients."
        )
    deep = {
        "exponential": "vanish exponentially with n for deep versions of the circuit",
        "polynomial": "vanish only polynomially with n for deep versions of the circuit",
    }.get(growth or "", "follow the algebra's dimension for deep versions of the circuit")
    bp = t.get("barren_plateau")
    agree = (bp is True and growth == "exponential") or (bp is False and growth == "polynomial")
    if bp is None:
        return (
            f"The Lie algebra answers: {scan}, and the algebra predicts gradients that {deep} "
            "(Var = sum of g-purities over the algebra's dimensions, Ragone et al. 2024)."
        )
    if agree:
        return f"Both agree: {scan}, and the Lie algebra predicts gradients that {deep}."
    return (
        f"The two answer different questions: {scan}, while the Lie algebra predicts "
        f"gradients that {deep}; the scan describes the depth as written, the prediction the "
        "deep limit, so a deeper circuit is expected to follow the prediction."
    )


@dataclass(frozen=True)
class Banner:
    """The colour of a report's banner and the reasons for it."""

    level: Literal["pass", "warn", "fail"]
    reasons: tuple[str, ...]


def banner(report: dict[str, Any]) -> Banner:
    """The banner colour and why.

    The rule (first match wins):

    1. ``fail`` (red) when a policy rule failed;
    2. ``warn`` (amber) when any of these holds: a policy rule warned; the trainability
       verdict is a barren plateau; the kernel concentrates; the whole 95% interval of the
       bias-corrected KL lies above :data:`FAR_FROM_HAAR` nats (far from Haar); the whole
       95% interval of the Meyer-Wallach mean lies below :data:`NO_ENTANGLEMENT` on two or
       more qubits (no entanglement);
    3. ``pass`` (green) otherwise.
    """
    pol = report.get("policy") or {}
    if pol.get("status") == "fail":
        return Banner("fail", (f"policy {pol.get('name')!r} failed",))
    reasons = []
    if pol.get("status") == "warn":
        reasons.append(f"policy {pol.get('name')!r} warned")
    if (report.get("trainability") or {}).get("barren_plateau") is True:
        reasons.append("barren plateau")
    if (report.get("kernel") or {}).get("concentrated") is True:
        reasons.append("the kernel concentrates")
    e = report.get("expressibility") or {}
    if e.get("interval") and e["interval"][0] > FAR_FROM_HAAR:
        reasons.append(f"KL from Haar above {FAR_FROM_HAAR} nats (far from Haar)")
    m = report.get("entanglement") or {}
    if m.get("interval") and report["circuit"]["qubits"] > 1 and m["interval"][1] < NO_ENTANGLEMENT:
        reasons.append(f"Meyer-Wallach below {NO_ENTANGLEMENT} (no entanglement)")
    return Banner("warn" if reasons else "pass", tuple(reasons))
