"""Combine a field's candidates into one value with a confidence, a status and alternatives.

How confidence is computed (also in DEVELOPERS.md, "Confidence"):

1. Each candidate's ``score`` is the strength of one piece of evidence: how strong its cue
   or label match is, how far the value sits from the cue, how good the reading is, and
   where it is (quoted and forwarded text counts for little).  A value the document marks
   as superseded ("was June 23") is scaled down; one it marks as revised ("now July 7")
   is scaled up.
2. Candidates are grouped by value.  A group's *support* combines its candidates as
   independent-ish evidence: ``1 - Π(1 - w_i·s_i)`` with the strongest counted fully and
   each further one at half weight (agreement between extractors and places raises it).
3. The best group wins.  A competing group with support ``c`` against the winner's ``b``
   lowers confidence to ``b · (1 - ½ (c/b)²)``: a close rival halves it, a weak one barely
   matters.  A winner read under a label that clearly names the field, in a clear layout
   (flag ``clear_label``), counts a rival with no such label (running text, a heading, a
   loosely matching label) at half its support, unless the rival is a revision.
4. Ambiguity lowers it further: an ambiguous numeric date, a year taken from the document's
   date or a century inferred from it, an amount whose separators may be read two ways, a
   guessed text encoding, a partial name, a value that acts for someone else.
5. A near miss of a choice (an edit-distance match) always goes to review; validation
   (next stage) turns failures into ``invalid``.
6. Evidence found only through other wordings than the field's cues (flag ``indirect``)
   never beats a value found through them; a value resting only on resemblance (flag
   ``uncued``: a label no cue names, a title word in running text) stays under
   ``review_below``.  Signs that a value is there but unread (flag ``unread_value``) count
   only when nothing else was found: the gap then goes to review instead of ``missing``.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, replace
from typing import Any

from .extract.analysis import Analysis
from .extract.extractors import UNREAD_UNTAKEN, untaken_mentions
from .extract.money import MoneyMention, period_unit, periods_in, restatement_between, same_pay
from .extract.text import fold
from .schema.model import FieldSpec, TargetSchema
from .types import Alternative, Candidate, FieldValue, Span, ValueStatus

REVISED_FACTOR = 1.12
SUPERSEDED_FACTOR = 0.3
IMPLICITLY_SUPERSEDED = 0.5
#: Multipliers for flags on the winning candidate.
FLAG_FACTORS = {
    "ambiguous_order": 0.97,
    "ambiguous_order_unconfigured": 0.6,
    "order_swapped": 0.9,
    "year_inferred": 0.96,
    "century_inferred": 0.96,  # "31 Dec 25": two digits of the year written
    "weak_anchor": 0.75,
    "weekday_mismatch": 0.6,
    "relative": 0.92,
    "encoding_guessed": 0.9,
    "partial_name": 0.7,
    "acting_for": 0.9,
    "separators_normalised": 0.97,
    "ambiguous_separator": 0.6,  # "$4.200": a decimal mark or thousands (extract/money.py)
    "ocr": 0.8,
}
#: A value under a label that clearly names the field, in a clear layout (flag
#: ``clear_label``: a ``Label: value`` line, a table row), against a rival value with no
#: such label (running text, a heading, a label that names the field only loosely): the
#: rival's support counts at this share.
UNLABELLED_RIVAL = 0.5
#: Confidence that a field is absent when nothing at all was found for it.
ABSENT_CONFIDENCE = 0.9
#: ... when its cues do occur in the document but no value could be read near them.
ABSENT_WITH_CUES_CONFIDENCE = 0.82
PERIOD_VALUES = ("hour", "year", "month", "week", "day")


@dataclass(frozen=True)
class _Group:
    key: Any
    support: float
    best: Candidate
    members: tuple[Candidate, ...]


def _key(value: Any) -> Any:
    if isinstance(value, str):
        return ("s", fold(value))
    return ("v", value)


def _adjusted(candidate: Candidate) -> float:
    score = candidate.score
    if "revised" in candidate.flags:
        score = min(0.97, score * REVISED_FACTOR)
    if "superseded" in candidate.flags:
        score *= SUPERSEDED_FACTOR
    return score


def _groups(candidates: Iterable[Candidate]) -> list[_Group]:
    candidates = list(candidates)
    revised = [c for c in candidates if "revised" in c.flags and c.value is not None]
    last_revision = max((c.span.start for c in revised), default=-1)
    buckets: dict[Any, list[tuple[float, Candidate]]] = {}
    for candidate in candidates:
        score = _adjusted(candidate)
        if revised and "revised" not in candidate.flags and candidate.span.start < last_revision and _key(candidate.value) not in {
            _key(c.value) for c in revised
        }:
            score *= IMPLICITLY_SUPERSEDED  # a later correction replaces this value
        if score <= 0.01:
            continue
        buckets.setdefault(_key(candidate.value), []).append((score, candidate))
    groups = []
    for key, members in buckets.items():
        members.sort(key=lambda item: -item[0])
        seen: set[tuple[str, int]] = set()
        remaining = 1.0
        weight = 1.0
        for score, candidate in members:
            marker = (candidate.extractor, candidate.span.start)
            if marker in seen:
                continue
            seen.add(marker)
            remaining *= 1.0 - weight * score
            weight = 0.5
        groups.append(_Group(key, 1.0 - remaining, members[0][1], tuple(c for _, c in members)))
    # evidence found only through other wordings (a label no cue names, a synonym or a title
    # word in running text: flag ``indirect``) never displaces evidence found through the cues
    direct = any(not _indirect(g) for g in groups)
    groups.sort(key=lambda g: (direct and _indirect(g), -g.support, g.best.span.start))
    return groups


def _clear_label(group: _Group) -> bool:
    return any("clear_label" in c.flags for c in group.members)


def _indirect(group: _Group) -> bool:
    return all("indirect" in c.flags for c in group.members)


def resolve_field(spec: FieldSpec, candidates: list[Candidate], *, review_below: float, cues_seen: bool) -> FieldValue:
    unread = [c for c in candidates if "unread_value" in c.flags]
    candidates = [c for c in candidates if "unread_value" not in c.flags]
    if unread and not candidates:
        return _unread_gap(spec, min(unread, key=lambda c: c.score), review_below)
    groups = _groups(candidates)
    if not groups:
        confidence = ABSENT_WITH_CUES_CONFIDENCE if cues_seen else ABSENT_CONFIDENCE
        return FieldValue(spec.name, None, confidence, ValueStatus.MISSING, reason="not found in the document")
    best = groups[0]
    rivals = groups[1:]
    if any("fallback" not in c.flags for c in best.members):
        # weak, cue-less evidence for other values does not count against cued evidence
        rivals = [g for g in rivals if any("fallback" not in c.flags for c in g.members)]
    rival = rivals[0].support if rivals else 0.0
    if rivals and _clear_label(best) and not _clear_label(rivals[0]) and not any("revised" in c.flags for c in rivals[0].members):
        rival *= UNLABELLED_RIVAL  # a form's own field against a mention elsewhere
    confidence = best.support * (1.0 - 0.5 * (rival / best.support) ** 2) if best.support else 0.0
    chosen = best.best
    for flag in chosen.flags:
        confidence *= FLAG_FACTORS.get(flag, 1.0)
    if "revised" in chosen.flags and len(groups) > 1:
        confidence *= 0.95  # the document contradicts itself; the revision is taken
    alternatives = tuple(
        Alternative(group.best.value, round(group.support, 3), group.best.span) for group in groups[1:4] if group.best.value is not None
    ) + tuple(alt for alt in chosen.alternatives)
    reasons = []
    status = ValueStatus.OK
    value = chosen.value
    if value is None:
        status = ValueStatus.MISSING
        if "system_sender" in chosen.flags:
            reasons.append("the sender named is a system or an organisation, not a person")
        else:
            reasons.append("the document says the value is not known" if "stated_missing" in chosen.flags else "no value")
    if "near_miss" in chosen.flags:
        status = ValueStatus.REVIEW
        confidence = min(confidence, review_below - 0.05)
        reasons.append("near miss of a listed value")
    if value is not None and all("uncued" in c.flags for c in best.members):
        # found only through words that resemble the field's (a label no cue names, a title
        # word in running text), with nothing else agreeing: a reviewer decides
        confidence = min(confidence, review_below - 0.05)
        reasons.append("found only through words that resemble the field's, not its cues")
    if "unreadable_characters" in chosen.flags and value is not None:
        status = ValueStatus.REVIEW
        confidence = min(confidence, review_below - 0.05)
        reasons.append("replaced or invisible characters in the source")
    if status is ValueStatus.OK and confidence < review_below:
        status = ValueStatus.REVIEW
        reasons.append("low confidence")
    if "ocr" in chosen.flags and value is not None:  # "read by OCR", or from a scan's own OCR layer
        reasons.append(next((note for note in chosen.evidence if "OCR" in note), "read by OCR"))
    if status is ValueStatus.MISSING and confidence < review_below:
        status = ValueStatus.REVIEW
        reasons.append("a value may be present")
    return FieldValue(
        field=spec.name,
        value=value,
        confidence=round(max(0.0, min(1.0, confidence)), 3),
        status=status,
        span=chosen.span if chosen.span != Span(0, 0) or value is not None else None,
        raw=chosen.raw,
        extractor=chosen.extractor,
        reason="; ".join(reasons),
        evidence=chosen.evidence,
        alternatives=alternatives,
    )


def unread_values(schema: TargetSchema, reason: str) -> tuple[FieldValue, ...]:
    """Every field of a document that was not read (or whose worker did not come back): empty."""
    note = f"document not read ({reason})"
    return tuple(FieldValue(spec.name, None, 0.0, ValueStatus.MISSING, reason=note) for spec in schema.fields)


def _unread_gap(spec: FieldSpec, sign: Candidate, review_below: float) -> FieldValue:
    """No value, but the document shows one is there (a label or cue with nothing readable):
    a gap a reviewer should look at, not a value that is simply absent."""
    return _review_gap(spec, sign.span, sign.raw, sign.extractor, min(sign.score, review_below - 0.05), sign.evidence, "; ".join(sign.evidence))


def _review_gap(spec: FieldSpec, span: Span, raw: str, extractor: str, confidence: float, evidence: tuple[str, ...], why: str,
                alternatives: tuple[Alternative, ...] = ()) -> FieldValue:
    """An empty field sent to review because a value may be present but was not read."""
    return FieldValue(
        field=spec.name,
        value=None,
        confidence=round(max(0.0, confidence), 3),
        status=ValueStatus.REVIEW,
        span=span,
        raw=raw,
        extractor=extractor,
        reason="a value may be present but was not read: " + why,
        evidence=evidence,
        alternatives=alternatives,
    )


def companions(schema: TargetSchema) -> dict[str, str]:
    """Choice fields that record the pay period of a money field: {choice field: money field}."""
    money = [spec.name for spec in schema.fields if spec.hints.kind == "money"]
    out: dict[str, str] = {}
    if not money:
        return out
    for spec in schema.fields:
        if spec.hints.kind != "choice":
            continue
        values = {fold(canonical) for canonical, _ in spec.hints.aliases}
        variants = {fold(v) for _, vs in spec.hints.aliases for v in vs}
        if values & set(PERIOD_VALUES) or any(word in v for v in variants for word in ("per hour", "per year", "hourly", "annual")):
            out[spec.name] = money[0]
    return out


def period_candidate(spec: FieldSpec, money_value: FieldValue, money_candidates: list[Candidate], vocabulary: Any) -> Candidate | None:
    """The pay period of the chosen money value, as a candidate for its companion field.

    The period written right after the chosen amount counts most (0.92); written after
    another mention of the same amount ("Salary: £38,500" ... "(£38,500) a year") 0.88; only
    named near the amount ("Annual salary: ...") 0.75.
    """
    chosen = _chosen(money_value, money_candidates)
    if chosen is None or money_value.value is None:
        return None
    source, score, where = chosen, 0.92, "written next to the amount"
    if chosen.facet("period") is None or chosen.facet("period_from") == "context":
        written = [
            c for c in money_candidates
            if c.value == money_value.value and c.facet("period") is not None and c.facet("period_from") != "context"
        ]
        if written:
            source, score, where = max(written, key=lambda c: c.score), 0.88, "written next to another mention of the amount"
        elif chosen.facet("period") is not None:
            score, where = 0.75, "named near the amount"
    period = source.facet("period")
    if period is None:
        return None
    canonical = None
    for probe in (period, f"per {period}", f"an {period}", f"a {period}"):
        mentions = vocabulary.find(probe, loose=False)
        if mentions:
            canonical = mentions[0].value
            break
    if canonical is None:
        return None
    return Candidate(
        field=spec.name,
        value=canonical,
        raw=source.raw,
        span=source.span,
        extractor="companion.v1",
        score=score,
        evidence=(f"pay period of {money_value.field}", where),
    )


# --- an amount and its pay period --------------------------------------------------------
#
# The chosen amount may carry its own period ("5,600 per month"), which must agree with the
# companion period field and be a period the schema can record.  When the document states
# the same pay in two periods ("USD 5,600 per month, i.e. USD 67,200 per annum"), the
# statement in a period the schema records is taken; when no such restatement exists, the
# contradiction stays and both fields go to review.


def pay_units(spec: FieldSpec, schema: TargetSchema) -> dict[str, str]:
    """The pay periods a money field's value may be quoted in, each with the value that
    records it: those its companion period field lists ({"year": "year", "hour": "hour"}),
    otherwise those its title and description name ("Annual salary" → year)."""
    for period_name, money_name in companions(schema).items():
        if money_name == spec.name:
            return period_values(schema.field(period_name))
    return {unit: unit for unit in periods_in(f"{spec.title} {spec.name.replace('_', ' ')} {spec.description or ''}")}


def period_values(spec: FieldSpec) -> dict[str, str]:
    """{period: the choice value that records it} for a period choice field."""
    out: dict[str, str] = {}
    for canonical, variants in spec.hints.aliases:
        for word in (canonical, *variants):
            unit = period_unit(word)
            if unit is not None:
                out.setdefault(unit, canonical)
                break
    return out


def _chosen(value: FieldValue, candidates: list[Candidate]) -> Candidate | None:
    return next((c for c in candidates if c.extractor == value.extractor and c.span == value.span and c.value == value.value), None)


def _own_period(candidate: Candidate) -> str | None:
    """The period written next to the amount itself (not only named near it)."""
    return candidate.facet("period") if candidate.facet("period_from") == "amount" else None


def _restatement(chosen: Candidate, mentions: list[MoneyMention], text: str, units: Iterable[str]) -> MoneyMention | None:
    """The same pay stated again right before or after the chosen amount, in one of ``units``."""
    own = _own_period(chosen)
    index = next((i for i, m in enumerate(mentions) if m.start == chosen.span.start), None)
    if own is None or index is None:
        return None
    this = mentions[index]
    for other in (mentions[index + 1] if index + 1 < len(mentions) else None, mentions[index - 1] if index else None):
        if other is None or other.period not in units or other.period == own:
            continue
        if this.currency and other.currency and this.currency != other.currency:
            continue
        first, second = (this, other) if this.start < other.start else (other, this)
        if restatement_between(text[first.end : second.start]) and same_pay(this.amount, own, other.amount, other.period):
            return other
    return None


def _take_restatement(
    spec: FieldSpec, value: FieldValue, chosen: Candidate, other: MoneyMention, found: list[Candidate], text: str, *,
    review_below: float, cues_seen: bool,
) -> tuple[FieldValue, list[Candidate]]:
    """Resolve again with the restated amount in place of the chosen one (the same pay)."""
    note = f"the same pay restated per {other.period} ({text[other.start:other.end]!r}) next to {chosen.raw!r}"
    facets = (("period", other.period or ""), ("period_from", "amount")) + ((("currency", other.currency),) if other.currency else ())
    taken = Candidate(
        field=spec.name, value=other.amount, raw=text[other.start : other.end], span=Span(other.start, other.end),
        extractor=chosen.extractor, score=chosen.score, evidence=chosen.evidence + (note,),
        flags=chosen.flags | {"restated"}, facets=facets,
    )
    kept = [c for c in found if _key(c.value) != _key(chosen.value)] + [taken]
    resolved = resolve_field(spec, kept, review_below=review_below, cues_seen=cues_seen)
    alternative = Alternative(chosen.value, round(value.confidence, 3), chosen.span)
    resolved = replace(
        resolved,
        alternatives=(alternative,) + tuple(a for a in resolved.alternatives if _key(a.value) != _key(chosen.value)),
        reason="; ".join(filter(None, (resolved.reason, f"restated per {other.period}: {chosen.raw!r} is the same pay"))),
    )
    return resolved, kept


def _to_review(value: FieldValue, review_below: float, why: str, alternatives: tuple[Alternative, ...] = ()) -> FieldValue:
    status = ValueStatus.REVIEW if value.status is ValueStatus.OK else value.status
    return replace(
        value,
        status=status,
        confidence=round(min(value.confidence, review_below - 0.05), 3),
        reason="; ".join(filter(None, (value.reason, why))),
        alternatives=value.alternatives + tuple(a for a in alternatives if all(_key(a.value) != _key(b.value) for b in value.alternatives)),
    )


def restate_pay(
    spec: FieldSpec, value: FieldValue, found: list[Candidate], units: dict[str, str], mentions: list[MoneyMention], text: str, *,
    review_below: float, cues_seen: bool,
) -> tuple[FieldValue, list[Candidate]]:
    """A chosen amount quoted per a period the schema cannot record ("per month" when the
    field is an annual salary or an hourly rate): the restatement of the same pay in a period
    it records, when the document gives one; otherwise the amount goes to review."""
    if not units or value.value is None:
        return value, found
    chosen = _chosen(value, found)
    own = _own_period(chosen) if chosen is not None else None
    if chosen is None or own is None or own in units:
        return value, found
    other = _restatement(chosen, mentions, text, units)
    if other is not None:
        return _take_restatement(spec, value, chosen, other, found, text, review_below=review_below, cues_seen=cues_seen)
    return _to_review(value, review_below, f"the amount is quoted per {own}, not per {' or '.join(sorted(units))}"), found


def check_pay_period(
    money_spec: FieldSpec, money: FieldValue, money_found: list[Candidate], period_spec: FieldSpec, period: FieldValue,
    mentions: list[MoneyMention], text: str, *, review_below: float, cues_seen: bool,
) -> tuple[FieldValue, FieldValue]:
    """The chosen amount's own period against the resolved period field: the restatement of
    the same pay in the field's period when there is one, otherwise both go to review."""
    if money.value is None or period.value is None:
        return money, period
    chosen = _chosen(money, money_found)
    own = _own_period(chosen) if chosen is not None else None
    if chosen is None or own is None:
        return money, period
    values = period_values(period_spec)
    wanted = next((unit for unit, canonical in values.items() if _key(canonical) == _key(period.value)), None)
    if wanted is None or wanted == own:
        return money, period
    other = _restatement(chosen, mentions, text, (wanted,))
    if other is not None:
        money, _ = _take_restatement(money_spec, money, chosen, other, money_found, text, review_below=review_below, cues_seen=cues_seen)
        return money, period
    why = f"the amount's own period ({own}) contradicts {period_spec.name} ({period.value})"
    own_value = values.get(own)
    alternative = (Alternative(own_value, 0.5, chosen.span),) if own_value is not None else ()
    return _to_review(money, review_below, why), _to_review(period, review_below, why, alternative)


# --- a gap while the document holds a value of the field's kind ----------------------------

#: At most this many untaken mentions are offered as alternatives.
UNTAKEN_ALTERNATIVES = 4


def untaken_gap(spec: FieldSpec, value: FieldValue, mentions: list[Any], sign: float, review_below: float) -> FieldValue:
    """A field left empty although the document holds values of its kind that no field took
    (``mentions``: readings with a value, a span and a quality): to review, with them as the
    alternatives, instead of silently missing.  A gap already sent to review keeps its
    reason and gains the alternatives."""
    alternatives = tuple(
        Alternative(m.value, round(sign * m.quality, 3), Span(m.start, m.end)) for m in mentions[:UNTAKEN_ALTERNATIVES]
    )
    if value.status is ValueStatus.REVIEW:
        return replace(value, alternatives=value.alternatives + alternatives)
    kind = spec.hints.kind.replace("_", " ")
    first = mentions[0]
    return _review_gap(spec, Span(first.start, first.end), "", "unread.v1", min(sign, review_below - 0.05), (f"{kind} values no field took",),
                       f"the document holds {len(mentions)} {kind} value(s) no field took", alternatives)


# --- one document's fields ------------------------------------------------------------------


def resolve_document(schema: TargetSchema, analysis: Analysis, candidates: dict[str, list[Candidate]]) -> dict[str, FieldValue]:
    """Every field of one document resolved from its candidates, in schema order: period
    fields after their amounts (the amount's period is evidence), then the checks between
    fields (an amount against its period, a gap next to an untaken value of its kind)."""
    review_below = schema.review_below
    resolved: dict[str, FieldValue] = {}
    used: dict[str, list[Candidate]] = {}  # the candidates each field was resolved from
    seen: dict[str, bool] = {}
    pairs = companions(schema)
    order = [spec for spec in schema.fields if spec.name not in pairs] + [spec for spec in schema.fields if spec.name in pairs]
    for spec in order:
        found: list[Candidate] = list(candidates[spec.name])
        money_name = pairs.get(spec.name)
        if money_name in resolved:
            extra = period_candidate(spec, resolved[money_name], used[money_name], analysis.vocabularies[spec.name])
            if extra is not None:
                found.append(extra)
        cues_seen = any(not analysis.excluded(hit.start) for hit in analysis.cue_hits.get(spec.name, ()))
        seen[spec.name] = cues_seen
        value = resolve_field(spec, found, review_below=review_below, cues_seen=cues_seen)
        if spec.hints.kind == "money":
            # an amount quoted per a period the schema cannot record: its restatement, or review
            value, found = restate_pay(spec, value, found, pay_units(spec, schema), analysis.money, analysis.text,
                                       review_below=review_below, cues_seen=cues_seen)
        resolved[spec.name], used[spec.name] = value, found
        if money_name in resolved:
            # the amount's own period against the period field: consistent, or both to review
            resolved[money_name], resolved[spec.name] = check_pay_period(
                schema.field(money_name), resolved[money_name], used[money_name], spec, resolved[spec.name], analysis.money, analysis.text,
                review_below=review_below, cues_seen=seen[money_name],
            )
    taken = {name: (item.value, item.span) for name, item in resolved.items()}
    for spec in schema.fields:
        item = resolved[spec.name]
        if item.value is None and (item.status is ValueStatus.MISSING and not item.extractor or item.extractor == "unread.v1"):
            # empty while the document holds a value of the field's kind no field took: review
            mentions = untaken_mentions(analysis, spec, taken)
            if mentions:
                resolved[spec.name] = untaken_gap(spec, item, mentions, UNREAD_UNTAKEN, review_below)
    return {spec.name: resolved[spec.name] for spec in schema.fields}
