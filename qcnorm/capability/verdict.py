"""The verdict against a required index, on the conservative (smaller) of Cpk and Ppk."""

from __future__ import annotations

__all__ = ["VERDICTS"]

#: Verdict codes and their meaning.
VERDICTS = {
    "meets": "the lower confidence bound of the conservative index reaches the requirement",
    "marginal": "the point estimate reaches the requirement but its lower confidence bound does not",
    "fails": "the point estimate is below the requirement",
    "not_assessed": "no specification limit that can be failed was given",
}


def _verdict(
    cpk: float | None, ppk: float | None, cpk_lb: float | None, ppk_lb: float | None,
    req: float, conf: float, stable: bool,
) -> tuple[str, str | None, float | None, float | None, str]:
    """(verdict, index name, point estimate, lower bound, sentence) on the smaller of Cpk, Ppk.

    The lower bounds are the one-sided Bissell (1990) bounds at ``conf``; an unstable
    process gets the warning that capability is not meaningful in front of the sentence.
    """
    pct = f"{conf * 100:g} %"
    if cpk is None:
        verdict, vname, vpoint, vlb = "not_assessed", None, None, None
        text = "Capability is not assessed: no specification limit that a part could fail was given."
    else:
        if ppk <= cpk:
            vname, vpoint, vlb = "Ppk", ppk, ppk_lb
        else:
            vname, vpoint, vlb = "Cpk", cpk, cpk_lb
        if vlb >= req:
            verdict = "meets"
            text = (
                f"Meets the required {req:.2f}: {vname} = {vpoint:.2f} and its {pct} lower "
                f"confidence bound {vlb:.2f} are both at or above {req:.2f}."
            )
        elif vpoint >= req:
            verdict = "marginal"
            text = (
                f"Meets the required {req:.2f} on the point estimate only: {vname} = {vpoint:.2f}, "
                f"but its {pct} lower confidence bound is {vlb:.2f}, so more data are needed "
                "to show it with confidence."
            )
        else:
            verdict = "fails"
            text = (
                f"Does not meet the required {req:.2f}: {vname} = {vpoint:.2f} "
                f"({pct} lower confidence bound {vlb:.2f})."
            )
    if not stable:
        text = (
            "Capability is not meaningful while the process is not in statistical control; "
            "the figures describe these data only. " + text
        )
    return verdict, vname, vpoint, vlb, text
