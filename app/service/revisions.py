"""Revisions: the same claim re-audited on a new version of its series, linked to the audit it revises.

A revision keeps the revised audit's claim and options (its seed too, so what differs comes from the data),
opens with what changed in the data and in the answer, and is linked both ways: ``revision_of`` on the new
audit, ``revisions`` on the old. Revisions of revisions form a chain; deleting one audit of a chain links
its revisions to the audit it revised (or, at the chain's head, leaves them to start chains of their own).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from app.errors import AccessDenied, Location, NotFound
from app.ingest.sampling import period_label
from app.service.access import key_matches
from app.settings import Settings
from app.store import AuditRecord, AuditRepository

REVISION_OF, REVISIONS, CHANGES = "revision_of", "revisions", "changes"
TIME_DECIMALS = 6  # times equal to a millionth of a year are the same period
SAME_VALUE = 1e-9  # relative: a value that moved less than this was not revised


def revised_inputs(parent: AuditRecord) -> tuple[dict[str, Any], dict[str, Any]]:
    """(claim, options) of the audit being revised, as its request gave them (the seed included)."""
    return dict(parent.input_document["claim"]), dict(parent.input_document["options"])


def check_may_revise(audits: AuditRepository, parent_id: str, owner_token: str | None, api_key: str | None,
                     settings: Settings, kind: str) -> None:
    """Revising needs the revised audit's owner token, or one of the service's API keys when it has any."""
    if audits.check_owner(parent_id, owner_token, kind):
        return
    if api_key and settings.api_key_list and key_matches(api_key, settings.api_key_list):
        return
    raise AccessDenied("revising an audit needs its owner token" + (" or an API key" if settings.api_key_list else ""),
                       missing_credentials=not owner_token, location=Location(field="X-Owner-Token"),
                       fix="Send the owner_token you received when the audit was created in the X-Owner-Token header")


def _points(payload: dict[str, Any]) -> dict[float, float]:
    return {round(float(t), TIME_DECIMALS): float(v) for t, v in zip(payload["time"], payload["value"])}


def _key_numbers(document: dict[str, Any]) -> dict[str, Any]:
    window, long_term = document.get("window") or {}, document.get("long_term") or {}
    verdict = document.get("verdict") or {}
    inputs = document.get("inputs") or {}
    return {"code": verdict.get("code"), "headline": verdict.get("headline"),
            "window_slope": window.get("slope"), "window_ci": window.get("ci"),
            "long_term_slope": long_term.get("slope"), "long_term_ci": long_term.get("ci"),
            "change_p_adjusted": (document.get("trend_change") or {}).get("p_value_adjusted"),
            "n": inputs.get("n"), "end": inputs.get("end")}


def what_changed(old_series: dict[str, Any], new_series: dict[str, Any], old_document: dict[str, Any],
                 new_document: dict[str, Any]) -> dict[str, Any]:
    """Points added, removed and revised (which periods; the largest revision), and the answer before and after."""
    old, new = _points(old_series), _points(new_series)
    sampling = new_series["sampling"]
    label = lambda t: period_label(t, sampling)  # noqa: E731
    added = sorted(set(new) - set(old))
    removed = sorted(set(old) - set(new))
    revised = [t for t in sorted(set(old) & set(new))
               if abs(new[t] - old[t]) > SAME_VALUE * max(1.0, abs(old[t]), abs(new[t]))]
    largest = None
    if revised:
        worst = max(revised, key=lambda t: (abs(new[t] - old[t]), -t))
        largest = {"period": label(worst), "time": worst, "before": old[worst], "after": new[worst],
                   "change": new[worst] - old[worst]}
    return {"added": {"count": len(added), "periods": [label(t) for t in added]},
            "removed": {"count": len(removed), "periods": [label(t) for t in removed]},
            "revised": {"count": len(revised), "periods": [label(t) for t in revised], "largest": largest},
            "before": _key_numbers(old_document), "after": _key_numbers(new_document),
            "verdict_changed": (old_document.get("verdict") or {}).get("code")
            != (new_document.get("verdict") or {}).get("code")}


def revision_amendment(parent: AuditRecord, new_series: dict[str, Any]):
    """What a new revision's document gains before it is stored: its link back and what changed."""
    def amend(document: dict[str, Any]) -> dict[str, Any]:
        return {**document, REVISION_OF: parent.id, REVISIONS: [],
                CHANGES: what_changed(parent.input_document["series"], new_series, parent.result_document, document)}
    return amend


def link_revision(audits: AuditRepository, parent_id: str, child_id: str) -> None:
    """The revised audit lists its new revision (the revision already names it)."""
    parent = audits.get(parent_id)
    revisions = list(parent.result_document.get(REVISIONS) or []) + [child_id]
    audits.update({parent_id: {REVISIONS: revisions}}, {parent_id: {REVISIONS: len(revisions)},
                                                        child_id: {REVISION_OF: parent_id}})


def chain_on_delete(document: dict[str, Any]) -> str | None:
    """What deleting this audit does to its chain, in one sentence (None when it is in no chain)."""
    parent, children = document.get(REVISION_OF), list(document.get(REVISIONS) or [])
    if not children and not parent:
        return None
    if not children:
        return "It is the latest revision in its chain: the audit it revised stays, and no longer lists it."
    many = f"its {len(children)} revisions" if len(children) > 1 else "its revision"
    if parent:
        return (f"The chain stays whole: {many} will be linked to the audit this one revised ({parent}), "
                "and each keeps its own report and what-changed block.")
    if len(children) == 1:
        return "It heads its chain: its revision will start the chain from there, and keeps its report."
    return f"It heads its chain: {many} will each start a chain of their own, and keep their reports."


def relink_after_delete(audits: AuditRepository, document: dict[str, Any], deleted_id: str) -> None:
    """Closes the gap a deleted audit leaves in its chain (see ``chain_on_delete``)."""
    parent, children = document.get(REVISION_OF), list(document.get(REVISIONS) or [])
    if not parent and not children:
        return
    changes: dict[str, dict[str, Any]] = {child: {REVISION_OF: parent} for child in children}
    summaries: dict[str, dict[str, Any]] = {child: {REVISION_OF: parent} for child in children}
    if parent:
        try:
            kept = [c for c in audits.get(parent).result_document.get(REVISIONS) or [] if c != deleted_id]
        except NotFound:  # the revised audit was deleted meanwhile: nothing to update there
            kept = None
        if kept is not None:
            changes[parent] = {REVISIONS: kept + children}
            summaries[parent] = {REVISIONS: len(kept + children)}
    audits.update(changes, summaries)


def chain(audits: AuditRepository, record: AuditRecord) -> dict[str, Any]:
    """The audits this one revised, oldest first, and those that revise it: ids with title and verdict."""
    def entry(found: AuditRecord) -> dict[str, Any]:
        verdict = found.result_document.get("verdict") or {}
        return {"id": found.id, "title": found.title, "created_at": found.created_at.isoformat(),
                "code": verdict.get("code"), "end": (found.result_document.get("inputs") or {}).get("end")}
    before, seen = [], {record.id}
    parent = record.result_document.get(REVISION_OF)
    while parent and parent not in seen and len(before) < 100:
        seen.add(parent)
        try:
            found = audits.get(parent)
        except NotFound:  # a link to a deleted audit ends the walk
            break
        before.append(entry(found))
        parent = found.result_document.get(REVISION_OF)
    after = []
    for child in record.result_document.get(REVISIONS) or []:
        try:
            after.append(entry(audits.get(child)))
        except NotFound:
            continue
    return {"earlier": list(reversed(before)), "later": after}
