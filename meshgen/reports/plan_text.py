"""Text for people: the plan table and the cautions printed with every plan."""

from __future__ import annotations

from ..planning.summary import plan_rows

CAUTION = (
    "Caution: these figures are a-priori estimates from flat-plate correlations. After "
    "solving, check the y+ your solver reports and show grid independence (meshgen family, "
    "meshgen gci) and domain independence (meshgen sweep). Defer to validated practice, "
    "local codes and licensed engineers for anything safety-relevant."
)


def plan_table(d: dict) -> str:
    """The sizing table of ``Plan.to_dict()`` as aligned text (rows from planning/summary.py)."""
    rows = plan_rows(d)
    width = max(len(k) for k, _ in rows)
    lines = [f"{k.ljust(width)}  {v}" for k, v in rows]
    lines += [f"assumes: {a}" for a in d.get("assumptions", [])]
    lines += [f"caution: {c}" for c in d.get("resolution", {}).get("cautions", [])]
    for w in d.get("warnings", []):
        lines.append(f"warning: {w}")
    return "\n".join(lines)
