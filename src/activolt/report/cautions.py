"""Safety cautions shown in reports for the hazards a run's cell implies.

They state common laboratory practice and always defer to local codes and the lab's own rules.
"""

from __future__ import annotations

from ..chemistry.electrolytes import Electrolyte

_DEFER = "Follow your local codes and your laboratory's safety rules; they take precedence."
HYDROGEN = ("Hydrogen gas is flammable and forms explosive mixtures with air (about 4–75 % by "
            "volume): vent the electrode outlet away from flames and sparks, check the gas line "
            "for leaks, and purge before and after use.")
ACID = ("Concentrated acids burn skin and eyes and give off corrosive vapour: wear eye "
        "protection and gloves, work in a fume hood, and add acid to water, never water to acid.")
MERCURY = ("Mercury and amalgams give off toxic vapour: keep them covered, work over a tray, "
           "collect spills with a mercury kit, and dispose of waste as hazardous.")


def cautions_for(electrolyte: Electrolyte, cell: str | None = None) -> list[str]:
    """The cautions that apply to a run of ``electrolyte`` in ``cell`` (diagram text).

    Examples
    --------
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> len(cautions_for(parse_electrolyte("HCl")))
    3
    >>> cautions_for(parse_electrolyte("KCl"), "Ag(s) | AgCl(s) | KCl(aq) | K(Hg)")[0][:7]
    'Mercury'
    """
    found: list[str] = []
    diagram = cell or ""
    if "Hg" in diagram:
        found.append(MERCURY)
    if electrolyte.cation == "H" or "H2" in diagram:
        found.append(HYDROGEN)
    if electrolyte.cation == "H":
        found.append(ACID)
    if found:
        found.append(_DEFER)
    return found
