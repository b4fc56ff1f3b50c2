"""Quoted replies and forwarded messages inside an email body are marked as regions, in
plain-text and HTML bodies alike, so that fields describe the message itself.

Every message is invented (a municipal water utility's staff mail) and built with the
stdlib ``email`` package, ``policy.default``.
"""

from __future__ import annotations

import datetime as dt
from email import policy
from email.message import EmailMessage
from pathlib import Path

import pytest

from structurize.api import extract_document
from structurize.readers import read_document
from structurize.types import Document, Span, ValueStatus

from conftest import RULES_ONLY, make_schema


def message(body: str, *, html: bool = False, subject: str = "Re: Valve inspection rota", alternative: str | None = None) -> bytes:
    msg = EmailMessage(policy=policy.default)
    msg["From"] = "Tomasz Brennan <tomasz.brennan@fenwater.example>"
    msg["To"] = "Ruth Kilbride <ruth.kilbride@fenwater.example>"
    msg["Date"] = "Tue, 10 Mar 2026 08:30:00 +0000"
    msg["Subject"] = subject
    if alternative is not None:
        msg.set_content(alternative)
        msg.add_alternative(body, subtype="html")
    else:
        msg.set_content(body, subtype="html" if html else "plain")
    return msg.as_bytes()


def read(tmp_path: Path, data: bytes, name: str = "mail.eml") -> Document:
    path = tmp_path / name
    path.write_bytes(data)
    return read_document(path, name, RULES_ONLY)


def regions(doc: Document) -> list[tuple[str, str]]:
    """(kind, text) of each region of the body, in order, the text on one line."""
    return [(r.kind, " ".join(doc.text[r.span.start : r.span.end].split())) for r in sorted(doc.regions, key=lambda r: r.span.start)]


OWN = "The east reservoir valves are done; I will take the Marsh Lane chamber on Thursday."

PLAIN_REPLY = f"""{OWN}

On Mon, 9 Mar 2026 at 16:05, Ruth Kilbride <ruth.kilbride@fenwater.example> wrote:
> Who can cover the Marsh Lane chamber this week?
>
>> On Fri, 6 Mar 2026, Colm Hardy wrote:
>> The chamber inspection moved to week 11.
"""

PLAIN_INLINE = f"""> Are the east reservoir valves done?

Yes, all twelve.

> And the Marsh Lane chamber?
{OWN}
"""

FORWARD_BLOCK = """---------- Forwarded message ---------
From: Colm Hardy <colm.hardy@fenwater.example>
Date: Fri, 6 Mar 2026 at 11:20
Subject: Chamber inspection
To: Ruth Kilbride <ruth.kilbride@fenwater.example>

The chamber inspection moved to week 11. Start date: 16 March 2026.
"""

PLAIN_REPLY_THEN_FORWARD = f"""{OWN}

On Mon, 9 Mar 2026 at 16:05, Ruth Kilbride <ruth.kilbride@fenwater.example> wrote:
> Who can cover the Marsh Lane chamber this week?

{FORWARD_BLOCK}"""

PLAIN_WRAPPED_INTRO = f"""{OWN}

On Mon, 9 Mar 2026 at 16:05, Ruth Kilbride from the Network Operations Team <
ruth.kilbride@fenwater.example> wrote:

> Who can cover the Marsh Lane chamber this week?
"""

OUTLOOK_BLOCK = """________________________________
From: Ruth Kilbride <ruth.kilbride@fenwater.example>
Sent: Monday, March 9, 2026 4:05 PM
To: Tomasz Brennan <tomasz.brennan@fenwater.example>
Subject: Valve inspection rota

Who can cover the Marsh Lane chamber this week?
"""

PLAIN_OUTLOOK = f"{OWN}\n\n{OUTLOOK_BLOCK}"

PLAIN_ORIGINAL = f"""{OWN}

-----Original Message-----
From: Ruth Kilbride <ruth.kilbride@fenwater.example>
Sent: Monday, March 9, 2026 4:05 PM
Subject: Valve inspection rota

Who can cover the Marsh Lane chamber this week?
"""

PLAIN_FORM = f"""Transfer of a standby engineer:
From: Marsh Lane depot
To: Holloway pumping station
Date: 16 March 2026

{OWN}
"""

GMAIL_REPLY = f"""<div dir="ltr">{OWN}</div><br>
<div class="gmail_quote"><div dir="ltr" class="gmail_attr">On Mon, 9 Mar 2026 at 16:05, Ruth Kilbride &lt;ruth.kilbride@fenwater.example&gt; wrote:<br></div>
<blockquote class="gmail_quote" style="margin:0 0 0 .8ex;border-left:1px #ccc solid;padding-left:1ex">
<div dir="ltr">Who can cover the <b>Marsh Lane</b> chamber this week?</div>
<blockquote class="gmail_quote"><div>The chamber inspection moved to week 11.</div></blockquote>
</blockquote></div>
"""

HTML_BOTTOM_POST = f"""<div>Ruth Kilbride wrote:</div>
<blockquote type="cite"><p>Who can cover the Marsh Lane chamber this week?</p></blockquote>
<p>{OWN}</p>
"""

OWA_REPLY = f"""<div>{OWN}</div>
<hr style="display:inline-block;width:98%">
<div id="divRplyFwdMsg" dir="ltr"><font face="Calibri"><b>From:</b> Ruth Kilbride &lt;ruth.kilbride@fenwater.example&gt;<br>
<b>Sent:</b> Monday, March 9, 2026 4:05 PM<br><b>To:</b> Tomasz Brennan &lt;tomasz.brennan@fenwater.example&gt;<br>
<b>Subject:</b> Valve inspection rota</font><div>&nbsp;</div></div>
<div>Who can cover the Marsh Lane chamber this week?</div>
"""

OUTLOOK_DESKTOP = f"""<div class="WordSection1"><p class="MsoNormal">{OWN}</p>
<div style="border:none;border-top:solid #E1E1E1 1.0pt;padding:3.0pt 0in 0in 0in">
<p class="MsoNormal"><b>From:</b> Ruth Kilbride &lt;ruth.kilbride@fenwater.example&gt; <br>
<b>Sent:</b> Monday, March 9, 2026 4:05 PM<br><b>To:</b> Tomasz Brennan<br><b>Subject:</b> Valve inspection rota</p></div>
<p class="MsoNormal">Who can cover the Marsh Lane chamber this week?</p></div>
"""

HTML_REPLY_THEN_FORWARD = f"""<div dir="ltr">{OWN}</div>
<div class="gmail_quote"><div class="gmail_attr">On Mon, 9 Mar 2026 at 16:05, Ruth Kilbride wrote:<br></div>
<blockquote class="gmail_quote"><div>Who can cover the Marsh Lane chamber this week?</div></blockquote></div>
<div class="gmail_quote"><div dir="ltr" class="gmail_attr">---------- Forwarded message ---------<br>
From: <b>Colm Hardy</b> &lt;colm.hardy@fenwater.example&gt;<br>Date: Fri, 6 Mar 2026 at 11:20<br>
Subject: Chamber inspection<br>To: Ruth Kilbride &lt;ruth.kilbride@fenwater.example&gt;<br></div><br>
<div>The chamber inspection moved to week 11. Start date: 16 March 2026.</div></div>
"""

APPLE_FORWARD = f"""<div>{OWN}</div><div><br><div>Begin forwarded message:</div><br>
<blockquote type="cite"><div><b>From: </b>Colm Hardy &lt;colm.hardy@fenwater.example&gt;</div>
<div><b>Subject: </b>Chamber inspection</div><div><b>Date: </b>6 March 2026 at 11:20:00 GMT</div>
<div>The chamber inspection moved to week 11.</div></blockquote></div>
"""

THUNDERBIRD_FORWARD = f"""<p>{OWN}</p><div class="moz-forward-container"><br>-------- Forwarded Message --------
<table class="moz-email-headers-table"><tr><th>Subject:</th><td>Chamber inspection</td></tr>
<tr><th>From:</th><td>Colm Hardy &lt;colm.hardy@fenwater.example&gt;</td></tr></table><br>
<p>The chamber inspection moved to week 11.</p></div>
"""

QUOTE_THEN_ASIDE = "Who can cover the Marsh Lane chamber this week?"


@pytest.mark.parametrize(
    "body, html, subject, expected",
    [
        pytest.param(
            PLAIN_REPLY, False, "Re: Valve inspection rota",
            [("quoted", "On Mon, 9 Mar 2026", "moved to week 11.")], id="plain-reply-nested",
        ),
        pytest.param(
            PLAIN_INLINE, False, "Re: Valve inspection rota",
            [("quoted", "> Are the east", "valves done?"), ("quoted", "> And the Marsh", "chamber?")], id="plain-inline-answers",
        ),
        pytest.param(
            PLAIN_REPLY_THEN_FORWARD, False, "Re: Valve inspection rota",
            [("quoted", "On Mon, 9 Mar 2026", "this week?"), ("forwarded", "---------- Forwarded message", "16 March 2026.")],
            id="plain-forward-after-reply",
        ),
        pytest.param(
            f"{OWN}\n\n{FORWARD_BLOCK}", False, "Fwd: Chamber inspection",
            [("forwarded", "---------- Forwarded message", "16 March 2026.")], id="plain-forward",
        ),
        pytest.param(
            PLAIN_WRAPPED_INTRO, False, "Re: Valve inspection rota",
            [("quoted", "On Mon, 9 Mar 2026", "this week?")], id="plain-wrapped-attribution",
        ),
        pytest.param(
            PLAIN_OUTLOOK, False, "RE: Valve inspection rota",
            [("quoted", "________", "this week?")], id="plain-outlook-reply",
        ),
        pytest.param(
            PLAIN_OUTLOOK, False, "FW: Valve inspection rota",
            [("forwarded", "________", "this week?")], id="plain-outlook-forward",
        ),
        pytest.param(
            PLAIN_ORIGINAL, False, "RE: Valve inspection rota",
            [("quoted", "-----Original Message-----", "this week?")], id="plain-original-message",
        ),
        pytest.param(PLAIN_FORM, False, "Standby transfer", [], id="plain-form-lines-are-not-headers"),
        pytest.param(
            f"{OWN}\n\nOur inspector wrote:\nAll twelve valves passed.\n", False, "Valve report", [],
            id="plain-wrote-without-a-quote-is-own-text",
        ),
        pytest.param(
            f"{OWN}\n\nAm 09.03.2026 um 16:05 schrieb Ruth Kilbride <ruth.kilbride@fenwater.example>:\n\n> Wer übernimmt die Kammer?\n",
            False, "AW: Valve inspection rota",
            [("quoted", "Am 09.03.2026", "die Kammer?")], id="plain-german-attribution",
        ),
        pytest.param(
            f"{OWN}\n\nLe lun. 9 mars 2026 à 16:05, Ruth Kilbride a écrit :\nQui prend la chambre ?\n", False, "RE: Valve inspection rota",
            [("quoted", "Le lun. 9 mars 2026", "la chambre ?")], id="plain-french-attribution-unmarked-quote",
        ),
        pytest.param(
            GMAIL_REPLY, True, "Re: Valve inspection rota",
            [("quoted", "On Mon, 9 Mar 2026", "moved to week 11.")], id="html-gmail-blockquote",
        ),
        pytest.param(
            HTML_BOTTOM_POST, True, "Re: Valve inspection rota",
            [("quoted", "Ruth Kilbride wrote:", "this week?")], id="html-bottom-post",
        ),
        pytest.param(
            OWA_REPLY, True, "RE: Valve inspection rota",
            [("quoted", "From: Ruth Kilbride", "this week?")], id="html-outlook-web-divider",
        ),
        pytest.param(
            OUTLOOK_DESKTOP, True, "RE: Valve inspection rota",
            [("quoted", "From: Ruth Kilbride", "this week?")], id="html-outlook-desktop-divider",
        ),
        pytest.param(
            OUTLOOK_DESKTOP, True, "FW: Valve inspection rota",
            [("forwarded", "From: Ruth Kilbride", "this week?")], id="html-outlook-desktop-forward",
        ),
        pytest.param(
            HTML_REPLY_THEN_FORWARD, True, "Re: Valve inspection rota",
            [("quoted", "On Mon, 9 Mar 2026", "this week?"), ("forwarded", "---------- Forwarded message", "16 March 2026.")],
            id="html-forward-after-reply",
        ),
        pytest.param(
            APPLE_FORWARD, True, "Fwd: Chamber inspection",
            [("forwarded", "Begin forwarded message:", "moved to week 11.")], id="html-apple-forward-holds-its-blockquote",
        ),
        pytest.param(
            THUNDERBIRD_FORWARD, True, "Fwd: Chamber inspection",
            [("forwarded", "-------- Forwarded Message --------", "moved to week 11.")], id="html-thunderbird-forward",
        ),
    ],
)
def test_regions_of_a_body(tmp_path: Path, body: str, html: bool, subject: str, expected: list[tuple[str, str, str]]) -> None:
    doc = read(tmp_path, message(body, html=html, subject=subject))
    found = regions(doc)
    assert [kind for kind, _ in found] == [kind for kind, _, _ in expected], found
    for (kind, text), (_, first, last) in zip(found, expected):
        assert text.startswith(first) and text.endswith(last), (kind, text)
    # the writer's own words and the message's own headers are never inside a region
    for own in (OWN, "Yes, all twelve.", "Tomasz Brennan <tomasz.brennan@fenwater.example>"):
        at = doc.text.find(own)
        if at >= 0:
            assert doc.region_of(Span(at, at + len(own))) is None, own


def test_regions_never_overlap(tmp_path: Path) -> None:
    for body, html in ((PLAIN_REPLY_THEN_FORWARD, False), (HTML_REPLY_THEN_FORWARD, True), (APPLE_FORWARD, True), (GMAIL_REPLY, True)):
        spans = sorted((region.span for region in read(tmp_path, message(body, html=html)).regions), key=lambda span: (span.start, span.end))
        assert all(a.end <= b.start for a, b in zip(spans, spans[1:])), spans


def test_the_plain_part_of_an_alternative_is_read_and_marked(tmp_path: Path) -> None:
    doc = read(tmp_path, message(GMAIL_REPLY, alternative=PLAIN_REPLY))
    assert [kind for kind, _ in regions(doc)] == ["quoted"]
    assert "> Who can cover" in doc.text  # the text/plain part, not the HTML


def test_a_blockquote_in_an_html_file_is_not_a_quoted_reply(tmp_path: Path) -> None:
    path = tmp_path / "notice.html"
    path.write_text(f"<p>{OWN}</p><blockquote>Start date: 16 March 2026.</blockquote>", encoding="utf-8")
    assert read_document(path, "notice.html", RULES_ONLY).regions == ()


# --- what extraction makes of it ---------------------------------------------------------------

SENDER_NAME = {"name": "sender_name", "type": "string", "extract": {"as": "person", "cues": ["from"]}}
SENDER_EMAIL = {"name": "sender_email", "type": "string", "format": "email", "extract": {"as": "email", "cues": ["from"]}}
SENT = {"name": "sent", "type": "date", "extract": {"as": "date", "cues": ["date", "sent"]}}
START = {"name": "start_date", "type": "date", "extract": {"as": "date", "cues": ["start date"]}}


def extract(tmp_path: Path, data: bytes) -> dict:
    path = tmp_path / "mail.eml"
    path.write_bytes(data)
    result = extract_document(path, make_schema(SENDER_NAME, SENDER_EMAIL, SENT, START), options=RULES_ONLY)
    return {item.field: item for item in result.values}


@pytest.mark.parametrize(
    "body, html, subject",
    [
        pytest.param(PLAIN_REPLY_THEN_FORWARD, False, "Re: Valve inspection rota", id="plain"),
        pytest.param(HTML_REPLY_THEN_FORWARD, True, "Re: Valve inspection rota", id="html"),
        pytest.param(f"<p>{OWN}</p>" + OUTLOOK_DESKTOP.replace("this week?", "this week? Start date: 16 March 2026."), True, "FW: Rota", id="outlook"),
    ],
)
def test_fields_describe_the_message_not_what_it_quotes_or_forwards(tmp_path: Path, body: str, html: bool, subject: str) -> None:
    values = extract(tmp_path, message(body, html=html, subject=subject))
    assert values["sender_name"].value == "Tomasz Brennan" and values["sender_name"].status is ValueStatus.OK
    assert values["sender_email"].value == "tomasz.brennan@fenwater.example" and values["sender_email"].status is ValueStatus.OK
    assert values["sent"].value == dt.date(2026, 3, 10) and values["sent"].status is ValueStatus.OK
    start = values["start_date"]  # stated only in the forwarded or quoted message
    assert start.status is not ValueStatus.OK
    assert start.value is None or any("inside a" in line for line in start.evidence), start


def test_a_date_in_an_html_blockquote_is_not_taken_as_the_messages_own(tmp_path: Path) -> None:
    body = f"<div>{OWN}</div><blockquote><div>Start date: 16 March 2026.</div></blockquote>"
    start = extract(tmp_path, message(body, html=True))["start_date"]
    assert start.status is not ValueStatus.OK, start
