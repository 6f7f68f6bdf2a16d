"""The report's joint-by-joint count: one table row per joint, then the totals and the attribution rule."""
from __future__ import annotations

import html

__all__ = ["joint_count_section"]


def _e(x) -> str:
    return html.escape(str(x))


def joint_count_section(indeterminacy) -> str:
    """HTML for `Indeterminacy.joints` (an empty string when the counts carry no joint rows)."""
    from ..indeterminacy import ATTRIBUTION_RULE, joint_totals

    joints = getattr(indeterminacy, "joints", ())
    if not joints:
        return ""
    t = indeterminacy.terms
    heads = ["Joint", "IFC entity", "DOF", "+ own rotations", "− restrained", "− eliminated", "− reduced",
             "= unknowns", "Unknowns", "Restrained (support)", "Eliminated (by; in terms of)", "Not unknowns"]
    rows = []
    for j in joints:
        entity = j.entity or j.label
        unknowns = " ".join(j.unknowns)
        if j.own_rotations:
            unknowns += f" + {j.own_rotations} own rotation{'s' if j.own_rotations != 1 else ''} ({', '.join(j.own_members)})"
        restrained = f"{' '.join(j.restrained)} ({j.support or 'support'})" if j.restrained else ""
        eliminated = "<br>".join(_e(e.text()) for e in j.eliminated)
        reduced = "<br>".join(_e(f"{c}: {why}") for c, why in j.reduced)
        cells = [_e(j.node_id), _e(entity), len(j.components), j.releases, len(j.restrained), len(j.eliminated),
                 len(j.reduced), j.count]
        rows.append("<tr>" + "".join(f"<td class='l'>{c}</td>" if i < 2 else f"<td>{c}</td>"
                                     for i, c in enumerate(cells))
                    + f"<td class='l'>{_e(unknowns.strip())}</td><td class='l'>{_e(restrained)}</td>"
                    f"<td class='l'>{eliminated}</td><td class='l'>{reduced}</td></tr>")
    s = joint_totals(joints)
    rows.append(f"<tr><th class='l'>total</th><th class='l'>{s['joints']} joints</th><th>{s['dof']}</th>"
                f"<th>{s['releases']}</th><th>{s['restraints']}</th><th>{s['constraints']}</th>"
                f"<th>{s['reductions']}</th><th>{s['kinematic']}</th><th colspan='4'></th></tr>")
    head = "".join(f"<th class='l'>{_e(h)}</th>" if i < 2 or i > 7 else f"<th>{_e(h)}</th>"
                   for i, h in enumerate(heads))
    formula = (f"joints × DOF per joint + releases − restraints − constraints − reductions = {t['joints']} × "
               f"{t['dof_per_joint']} + {t['releases']} − {t['restraints']} − {t['constraints']} − "
               f"{t['reductions']} = {indeterminacy.kinematic} (kinematic indeterminacy)")
    parts = ["<h3 id='joints'>The count joint by joint</h3>",
             "<p>Per joint: its components (DOF), plus the own rotations of hinged member ends there, less the "
             "components its support holds, those an exact constraint eliminates and those that are no unknowns, "
             "leaves its independent unknowns. The columns add up to the terms above.</p>",
             f"<table class='joints'><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>",
             f"<p>{_e(formula)}</p>"]
    if t.get("redundant_constraints"):
        parts.append(f"<p>{t['redundant_constraints']} redundant constraints take nothing away (listed in the "
                     "notes).</p>")
    parts.append(f"<p><small>{_e(ATTRIBUTION_RULE)}</small></p>")
    return "".join(parts)
