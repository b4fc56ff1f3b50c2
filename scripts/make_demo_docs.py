"""Generate the structurize demo corpus under ``demo_docs/``.

Scenario (entirely invented): **Tallowbrook Veterinary Partners (TVP)**, a small
US group of veterinary hospitals, writes dates month-first (MDY).  It runs four
sites:

* Tallowbrook Main Hospital (``TMH``, "Main Hospital", "Tallowbrook Main")
* Oriel Street Clinic (``OSC``, "Oriel St.", "Oriel Street")
* Hadley Pines Equine Center (``HPEC``, "Hadley Pines")
* Juniper Wharf Emergency Hospital ("Juniper Wharf", "Juniper Wharf ER")

Departments: Surgery, Nursing, Client Services, Laboratory, Administration.
Employee IDs are ``TV`` followed by five digits (``TV30418``).

Recurring cast: Renée Baptiste (Director of People & Culture), Radosław
Włodarczyk (HR Business Partner), Sigrid Sørbø (Talent Acquisition
Coordinator), Zoë Castellanos (Payroll & Benefits), Desmond Achterberg (COO),
Dr. Ifeoma Adeyemi-Hale (Medical Director, Juniper Wharf), Dr. Haruto Arakawa
(Hospital Manager, Oriel Street), Lucía Ferrández (Practice Manager, Hadley
Pines), Dr. Saanvi Krishnamurthy (Chief of Surgery), Rowan Tremblay (Client
Services Lead), Malak Nasser (Laboratory Supervisor) and Ignacio Beltrán
(Nursing Manager).  Candidates and employees are invented too.  E-mail
addresses use the reserved ``.example`` TLD, phone numbers 555-01xx and IP
addresses the documentation ranges.

The corpus has four kinds, matching ``schemas/<kind>.yaml`` and the expected
tables in ``tests/golden/demo/<kind>.csv``:

* ``offer_letter``     .html, .docx, .pdf (2 pages), .txt
* ``exit_interview``   .md, .docx, .txt
* ``transfer_request`` .pdf, .md, .html
* ``email``            four RFC 5322 .eml messages with CRLF line endings

Usage::

    python scripts/make_demo_docs.py            # (re)write demo_docs/
    python scripts/make_demo_docs.py --out DIR  # write somewhere else

Output is deterministic: .docx files get fixed core properties and fixed zip
timestamps, .pdf files a fixed creation date, so re-running the script
reproduces the committed files byte for byte (given the same python-docx and
fpdf2 versions).  Requires python-docx and fpdf2.
"""

from __future__ import annotations

import argparse
import datetime as dt
import io
import quopri
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
FIXED_TIME = dt.datetime(2025, 1, 6, 9, 0, 0, tzinfo=dt.timezone.utc)
FONT_DIR = Path("/usr/share/fonts/truetype/dejavu")

# --------------------------------------------------------------------------
# offer_letter
# --------------------------------------------------------------------------

OFFER_WHITLOCK_REYES_HTML = """\
<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>Offer of Employment &ndash; Jonah Whitlock-Reyes</title>
<style>
  body { font-family: Georgia, serif; max-width: 42em; margin: 2em auto; }
  table { border-collapse: collapse; margin: 1em 0; }
  th, td { border: 1px solid #999; padding: 4px 8px; text-align: left; }
</style>
</head>
<body>
<p><strong>Tallowbrook Veterinary Partners</strong><br>
People &amp; Culture &middot; 1180 Cobb Avenue &middot; Tallowbrook<br>
(541) 555-0100 &middot; careers@tallowbrookvet.example</p>

<p>May 6, 2025</p>

<p>Dr. Jonah Whitlock-Reyes<br>
jonah.wr@mailbox.example</p>

<p>Dear Dr. Whitlock-Reyes,</p>

<p>Thank you for spending the day with our team on April 24. We&rsquo;re
delighted to offer you the position of <strong>Associate Veterinarian</strong>
with Tallowbrook Veterinary Partners. The key terms of our offer are
summarized below.</p>

<table>
<tr><th>Position</th><td>Associate Veterinarian</td></tr>
<tr><th>Location</th><td>Oriel St. Clinic</td></tr>
<tr><th>Reports to</th><td>Dr. Haruto Arakawa, Hospital Manager</td></tr>
<tr><th>Start date</th><td>Monday, June 2, 2025</td></tr>
<tr><th>Base salary</th><td>$118,500 per year, paid bi-weekly</td></tr>
<tr><th>Signing bonus</th><td>$5,000, paid with your first paycheck</td></tr>
<tr><th>Schedule</th><td>Four 10-hour shifts on a Monday&ndash;Saturday rotation</td></tr>
<tr><th>CE allowance</th><td>$2,000 per year plus three paid CE days</td></tr>
</table>

<p>Your first two days (June 2&ndash;3) will be group orientation at
Tallowbrook Main Hospital; from Wednesday you&rsquo;ll be with the team at
Oriel Street, where Dr. Arakawa has arranged two weeks of shadowed
appointments before you take a full schedule.</p>

<p>This offer is contingent on verification of your state veterinary license
and DEA registration. Please sign and return the enclosed copy by
<strong>May 16, 2025</strong>. If you have questions about medical, dental or
the 401(k) plan, Zo&euml; Castellanos in Payroll &amp; Benefits
(zoe.castellanos@tallowbrookvet.example) will be glad to walk you through the
options.</p>

<p>We&rsquo;re looking forward to having you on the team.</p>

<p>Warm regards,</p>

<p>Ren&eacute;e Baptiste<br>
Director of People &amp; Culture</p>

<p><small>cc: Dr. Haruto Arakawa; Zo&euml; Castellanos</small></p>
</body>
</html>
"""

OFFER_DVORAKOVA_TXT = """\
TALLOWBROOK VETERINARY PARTNERS
People & Culture | 1180 Cobb Avenue, Tallowbrook | (541) 555-0100

December 9, 2025

Hana Dvořáková
hana.dvorakova@mailbox.example

Dear Hana,

RE: Offer of employment - Laboratory Technologist

Thank you for meeting the lab team at your panel interview on December 2.
I am pleased to offer you the role of Laboratory Technologist in our
in-house diagnostic laboratory at TMH, our main hospital on Cobb Avenue.
You will report to Malak Nasser, Laboratory Supervisor.

Pay. Your starting base salary will be $61,750 annually, paid bi-weekly.
The laboratory shares a weekend on-call rota; each on-call weekend carries
a stipend of $150, which is paid separately from your base salary.

Start. Your first day will be Monday, January 5. The hospital runs a
reduced schedule over the holidays, so we would rather welcome you in the
new year when Malak can spend your first week with you. Please come to the
main reception at 8:30 a.m. and ask for her.

Benefits. You will be eligible for medical and dental coverage from the
first of the month after 30 days of employment, and for the 401(k) match
after 90 days.

This offer is contingent on a satisfactory background check. Please reply
by December 16 to let us know your decision; a signed copy of this letter
by e-mail is fine.

Sincerely,

Renée Baptiste
Director of People & Culture
Tallowbrook Veterinary Partners

cc: Malak Nasser
"""

OFFER_KEARNEY_DOCX = {
    "title": "Offer of Employment - Siobhán Kearney",
    "blocks": [
        ("heading", "Tallowbrook Veterinary Partners"),
        ("p", "Hadley Pines Equine Center · 4702 Quarry Mill Road · Tallowbrook · (541) 555-0152"),
        ("p", "June 23, 2025"),
        ("p", "Siobhán Kearney\n88 Larkspur Lane, Apt 3\nTallowbrook"),
        ("p", "Re: Offer of employment"),
        ("p", "Dear Siobhán,"),
        (
            "p",
            "Following our conversation on June 17, I am pleased to confirm our offer for you "
            "to join the Hadley Pines team. The details are set out in the table below; please "
            "read them together with the enclosed benefits summary.",
        ),
        (
            "table",
            [
                ("Position", "Equine Practice Coordinator"),
                ("Location", "HPEC (Hadley Pines)"),
                ("Reporting to", "Lucía Ferrández, Practice Manager"),
                ("Start date", "08/04/2025"),
                ("Base salary", "$52,400 annually"),
                ("Performance bonus", "Up to 6% of base salary, reviewed each March"),
                ("Relocation allowance", "$1,200 (one-time, taxable)"),
                ("Employment type", "Full-time, exempt"),
            ],
        ),
        (
            "p",
            "The start date falls the week after the county fair, when the barn team has more "
            "time for training. Your first morning begins at 7:30 a.m. in the main barn office, "
            "where Lucía will meet you.",
        ),
        (
            "p",
            "This offer is contingent on a satisfactory reference check and a valid driver's "
            "license, as the role includes occasional ambulatory visits to client farms. To "
            "accept, please sign below and return a copy to me by July 3, 2025.",
        ),
        ("p", "Kind regards,"),
        ("p", "Sigrid Sørbø\nTalent Acquisition Coordinator, on behalf of Lucía Ferrández"),
        ("p", "Accepted: ______________________________   Date: ______________"),
    ],
}

OFFER_RIBEIRO_PDF = {
    "title": "Offer of Employment - Mateus Ribeiro",
    "pages": [
        [
            ("h", "Tallowbrook Veterinary Partners"),
            (
                "small",
                "Juniper Wharf Emergency Hospital | 27 Ferrule Street, Tallowbrook | open 24 hours"
                " | (541) 555-0177",
            ),
            ("gap",),
            ("p", "August 12, 2025"),
            ("p", "Mateus Ribeiro\n19 Willet Court\nTallowbrook"),
            ("p", "Dear Mateus,"),
            (
                "p",
                "On behalf of Dr. Ifeoma Adeyemi-Hale and the whole overnight team, I am happy to "
                "offer you the position of Registered Veterinary Technician on our Emergency & "
                "Critical Care team at the Juniper Wharf emergency hospital.",
            ),
            (
                "p",
                "Pay. Your base rate will be $24.60 per hour. Shifts that begin after 6:00 p.m. "
                "carry a night differential of $2.25/hr on top of the base rate, and weekend "
                "shifts an additional $1.00/hr. The position is non-exempt and overtime is paid "
                "at time and a half.",
            ),
            (
                "p",
                "Start date. Your first day will be Monday, September 8, 2025. Please arrive at "
                "8:00 a.m.; the first week is day shifts so that you can complete equipment and "
                "controlled-drug training before joining the night rota.",
            ),
            (
                "p",
                "Reporting. You will report to Dr. Ifeoma Adeyemi-Hale, Medical Director at Juniper "
                "Wharf, and day to day to the shift lead on duty.",
            ),
            ("small", "Page 1 of 2"),
        ],
        [
            ("h2", "Benefits and conditions"),
            ("bullet", "Medical and dental coverage from the first of the month after 30 days."),
            ("bullet", "401(k) with a 4% employer match after 90 days."),
            ("bullet", "Uniform allowance of $300 per year and two pairs of clinic shoes."),
            ("bullet", "Continuing-education support of $750 per year for RVT credits."),
            (
                "p",
                "This offer is contingent on a satisfactory background check and on verification "
                "of your RVT credential, which we will need to receive by September 1, 2025. "
                "Please confirm your acceptance by August 22, 2025.",
            ),
            ("p", "Sincerely,"),
            ("p", "Sigrid Sørbø\nTalent Acquisition Coordinator"),
            ("small", "cc: Dr. Ifeoma Adeyemi-Hale; Zoë Castellanos, Payroll & Benefits"),
            ("gap",),
            ("p", "I accept the offer of employment described in this letter."),
            ("p", "Signature: ______________________________   Date: ______________"),
            ("small", "Page 2 of 2"),
        ],
    ],
}

# --------------------------------------------------------------------------
# exit_interview
# --------------------------------------------------------------------------

EXIT_AMBROSE_MD = """\
# Exit Interview Record

**Tallowbrook Veterinary Partners — People & Culture**
Confidential. File in the employee's personnel record.

| Field | Response |
|---|---|
| Employee name | Felix Ambrose |
| Employee ID | TV30418 |
| Position | Client Services Representative |
| Department | Front desk (Client Services) |
| Site | Oriel Street Clinic |
| Hire date | 03/08/2021 |
| Last day of employment | 04/25/2025 |
| Interview date | 04/22/2025 |
| Interviewer | Radosław Włodarczyk, HR Business Partner |

## Reason for leaving

Primary reason: **career growth**. Felix has accepted a practice manager
position at a small-animal clinic in another county and said he "couldn't see
a path to a supervisor role" at Oriel Street in the next two years.

Secondary reasons: none. Asked about pay, he called it "fair for the front
desk" and said it was not a factor.

## Feedback

- Enjoyed the team and the clients; praised Dr. Haruto Arakawa's support
  during last year's renovation.
- Suggested a formal lead-CSR role with a training path.
- The January scheduling change left Saturdays short-staffed; raised as
  feedback, not as a reason for leaving.

## Outcome

- Eligible for rehire: **Yes**
- Keys and badge to be returned on the last day; final paycheck handled by
  Zoë Castellanos (Payroll & Benefits).
"""

EXIT_SITHOLE_DOCX = {
    "title": "Exit Interview Form - Nomvula Sithole",
    "blocks": [
        ("heading", "Exit Interview Form"),
        ("p", "Tallowbrook Veterinary Partners · People & Culture · Confidential"),
        (
            "table",
            [
                ("Employee", "Nomvula Sithole"),
                ("Employee ID", "TV21877"),
                ("Job title", "Lead Veterinary Technician"),
                ("Department", "Veterinary Nursing"),
                ("Site", "Tallowbrook Main Hospital"),
                ("Manager", "Ignacio Beltrán"),
                ("Resignation received", "May 28, 2025"),
                ("Final working day", "June 30, 2025"),
                ("Interview date", "June 24, 2025"),
                ("Interview conducted by", "Renée Baptiste"),
            ],
        ),
        ("p", "Main reason for leaving (tick one):"),
        (
            "p",
            "[ ] Pay   [ ] Career growth   [X] Relocation   [ ] Manager   [ ] Workload"
            "   [ ] Retirement   [ ] Personal   [ ] Other",
        ),
        (
            "p",
            "Comments: Nomvula's partner has accepted a residency in another state and the "
            "family moves in the first week of July. She said she would have stayed otherwise "
            "and described the nursing team as \u201cthe best I have worked with\u201d. She "
            "asked whether remote relief work was possible; it is not, for a technician role. "
            "She praised Ignacio's rota planning and asked that the new anesthesia monitors "
            "be rolled out to all three treatment rooms.",
        ),
        ("p", "Would you recommend Tallowbrook as a place to work?   [X] Yes   [ ] No"),
        ("p", "Eligible for rehire:   [X] Yes   [ ] No   (confirmed with manager 06/25/2025)"),
        ("p", "Interviewer signature: Renée Baptiste"),
    ],
}

EXIT_HALVORSEN_TXT = """\
EXIT INTERVIEW - NOTES (confidential)

Employee: Björn Halvorsen        Emp #: TV10562
Role: Senior Surgical Technician  Dept: Surgery / OR, Tallowbrook Main
Notice given: 08/15/2025 (agreed last day was 09/26/2025)
Last shift: Fri 09/12/2025 (moved up at employee's request)
Interviewer: Radosław Włodarczyk (HRBP)
Interview held: 09/09/2025

Notes:
* 11 yrs with TVP, the last 6 in surgery under Dr. Saanvi Krishnamurthy.
* Main reason: workload. The surgical schedule went from 2 to 3 OR rooms
  in March without extra techs; he regularly stays 2+ hrs past his shift
  and says he is "burned out".
* Pay came up only in passing ("the overtime was paid, that's not the
  issue").
* Not relocating. Plans to take a few months off, then look for per-diem
  work.
* Suggestions for Surgery: hire a third surgical tech before the OR
  schedule grows again; rotate weekend on-call more evenly.
* Badge and controlled-drug cabinet key to be returned at his last shift.

Rehire: NOT eligible. Per policy, employees who do not work the agreed
notice period are not rehired; HR to review in 12 months.
"""

# --------------------------------------------------------------------------
# transfer_request
# --------------------------------------------------------------------------

TRANSFER_FUJIMURA_PDF = {
    "title": "Internal Transfer Request - Noa Fujimura",
    "pages": [
        [
            ("h", "Tallowbrook Veterinary Partners"),
            ("h2", "Internal Transfer Request (Form PC-14)"),
            ("gap",),
            ("h3", "Section A - Employee"),
            ("line", "Employee name: Noa Fujimura"),
            ("line", "Employee ID: TV27730"),
            ("line", "Current position: Client Services Representative"),
            ("line", "Current site: TMH"),
            ("line", "Department: Client Services"),
            ("line", "Date submitted: 06/02/2025"),
            ("gap",),
            ("h3", "Section B - Requested move"),
            ("line", "Requested site: Oriel Street Clinic"),
            ("line", "New position title: Senior Client Services Representative"),
            ("line", "Requested effective date: 07/07/2025"),
            (
                "p",
                "Reason: Oriel Street has an open senior CSR post (requisition OSC-0425) and "
                "it is much closer to home. I have covered the Oriel St. desk on Saturdays "
                "since January.",
            ),
            ("gap",),
            ("h3", "Section C - Approvals"),
            ("line", "Current manager: Rowan Tremblay - Approved 06/04/2025"),
            ("line", "Receiving manager: Dr. Haruto Arakawa - Approved 06/05/2025"),
            ("line", "Final approval (People & Culture): Renée Baptiste - Approved 06/09/2025"),
            ("gap",),
            (
                "small",
                "Notes: pay moves to the senior CSR band ($21.10/hr) from the effective date. "
                "Facilities to set up badge access for Oriel Street before 07/07/2025.",
            ),
        ],
    ],
}

TRANSFER_OSEI_MD = """\
# MEMO

**To:** Desmond Achterberg, Chief Operating Officer
**From:** Lucía Ferrández, Practice Manager, Hadley Pines Equine Center
**Cc:** Dr. Ifeoma Adeyemi-Hale; Radosław Włodarczyk (People & Culture)
**Date:** August 18, 2025
**Re:** Transfer request — Kwabena Osei (TV19044)

Desmond,

Kwabena Osei has asked to transfer from Hadley Pines to the Juniper Wharf
emergency hospital. He has been a veterinary assistant with us for three
years, passed his RVT exam in July, and wants emergency experience that we
cannot give him at the equine center.

| | Current | Requested |
|---|---|---|
| Site | Hadley Pines Equine Center | Juniper Wharf |
| Title | Veterinary Assistant | Emergency Veterinary Technician |
| Schedule | Days, Mon–Fri | Nights, 3 × 12 h |

Kwabena originally asked to start on September 1. I would like to keep him
through our fall vaccination clinics, and Dr. Adeyemi-Hale is happy with a
later start, so we have agreed on an **effective date of September 15, 2025**.

Dr. Adeyemi-Hale has confirmed the opening and supports the move. I support it
too and will backfill his position. Your sign-off is the final approval
needed.

Lucía

---

**Decision:** Approved — Desmond Achterberg, COO, 08/21/2025
"""

TRANSFER_SUNDQVIST_HTML = """\
<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>Internal Transfer Request &ndash; Elin Sundqvist</title>
</head>
<body>
<h1>Internal Transfer Request</h1>
<p>Tallowbrook Veterinary Partners &middot; People &amp; Culture &middot;
submitted through the HR portal</p>

<table>
<tr><td>Employee</td><td>Elin Sundqvist</td></tr>
<tr><td>Employee ID</td><td>TV33105</td></tr>
<tr><td>Current site</td><td>Juniper Wharf ER</td></tr>
<tr><td>Current title</td><td>Veterinary Technician</td></tr>
<tr><td>Requested site</td><td>Tallowbrook Main Hospital</td></tr>
<tr><td>Requested title</td><td>Surgical Technician</td></tr>
<tr><td>Proposed effective date</td><td>October 6, 2025</td></tr>
<tr><td>Submitted</td><td>September 2, 2025</td></tr>
</table>

<h2>Employee&rsquo;s statement</h2>
<p>I&rsquo;ve spent two years on the overnight emergency rota at Juniper Wharf
and would like to specialise in surgery. The surgical team at the main
hospital now runs three OR rooms and has an opening for a surgical
technician. I&rsquo;m happy to pick up emergency shifts at the Wharf during
the hand-over month if that helps the night schedule.</p>

<h2>Approval trail</h2>
<ul>
<li>Current manager &ndash; Dr. Ifeoma Adeyemi-Hale: <em>endorsed</em>, 09/04/2025
(&ldquo;we&rsquo;ll miss her, but it&rsquo;s the right move&rdquo;)</li>
<li>Receiving manager &ndash; Dr. Saanvi Krishnamurthy: <em>endorsed</em>, 09/05/2025</li>
<li>Final approval (COO) &ndash; Desmond Achterberg: <strong>pending</strong></li>
</ul>

<p>Status: <strong>Pending final approval.</strong> The effective date will
be confirmed once the COO has signed off.</p>
</body>
</html>
"""

# --------------------------------------------------------------------------
# email (RFC 5322, CRLF)
# --------------------------------------------------------------------------

EMAIL_FRONT_DESK_HEADERS = [
    "Return-Path: <rowan.tremblay@tallowbrookvet.example>",
    "Received: from tmh-ws-114.tallowbrookvet.example ([198.51.100.44])",
    "\tby mail.tallowbrookvet.example with ESMTPSA id 7Qm2kD;",
    "\tFri, 21 Mar 2025 04:15:02 +0000",
    "Message-ID: <20250320211500.4f2a91@tmh-ws-114.tallowbrookvet.example>",
    "Date: Thu, 20 Mar 2025 21:15:00 -0700",
    "From: rowan.tremblay@tallowbrookvet.example",
    "To: cs-oriel@tallowbrookvet.example, cs-main@tallowbrookvet.example",
    "Cc: haruto.arakawa@tallowbrookvet.example",
    "Subject: Saturday front desk coverage - March 22",
    "MIME-Version: 1.0",
    "Content-Type: text/plain; charset=us-ascii",
    "Content-Transfer-Encoding: 7bit",
]

EMAIL_FRONT_DESK_BODY = """\
Hi all,

Quick one before the weekend. Oriel Street is short two CSRs this Saturday
(March 22) because of the low-cost vaccine clinic, so I need two volunteers
from the Main Hospital desk to cover 8:00-1:00. Saturday March 29 is
already covered.

Overtime is approved for anyone who goes over 40 hours that week; log it
in the timesheet with code OT-CS. Parking at Oriel St. is behind the
building and the side-door code is the same as last month.

Reply to me by Friday noon if you can help.

Thanks,
Rowan

Rowan Tremblay
Client Services Lead, Tallowbrook Main Hospital
(541) 555-0124
"""

EMAIL_HEADCOUNT_HEADERS = [
    "Received: from [192.0.2.61] (vpn-61.tallowbrookvet.example [192.0.2.61])",
    "\tby mail.tallowbrookvet.example with ESMTPSA id 2bX9rT;",
    "\tMon, 30 Jun 2025 23:05:36 +0000",
    "Message-ID: <a41c7e02-q3plan@tallowbrookvet.example>",
    "Date: Mon, 30 Jun 2025 16:05:33 -0700",
    "From: Desmond Achterberg <desmond.achterberg@tallowbrookvet.example>",
    "To: site-managers@tallowbrookvet.example",
    "Cc: Renee Baptiste <renee.baptiste@tallowbrookvet.example>",
    "Subject: Q3 headcount plan: templates due Friday, July 11",
    "MIME-Version: 1.0",
    'Content-Type: multipart/alternative; boundary="=_tvp_alt_7d41c2"',
]

EMAIL_HEADCOUNT_TEXT = """\
Hi everyone,

The Q3 headcount template is now in the shared drive under People &
Culture > Planning. Please fill in one tab per site and send it back by
Friday, July 11. A few notes:

- Count filled posts as of July 1, not budgeted ones.
- List open requisitions separately (Oriel Street and Juniper Wharf both
  have two open).
- Lucía: please include the seasonal barn staff at Hadley Pines as
  temporary, not as permanent headcount.

Renée and I will review the submissions on July 15 and take the combined
plan to the partners' meeting on July 22.

Thanks,
Desmond

Desmond Achterberg
Chief Operating Officer, Tallowbrook Veterinary Partners
(541) 555-0101
"""

EMAIL_HEADCOUNT_HTML = """\
<html>
<body style="font-family: Arial, sans-serif; font-size: 14px;">
<p>Hi everyone,</p>
<p>The Q3 headcount template is now in the shared drive under <b>People &amp;
Culture &gt; Planning</b>. Please fill in one tab per site and send it back by
<b>Friday, July 11</b>. A few notes:</p>
<ul>
<li>Count filled posts as of July 1, not budgeted ones.</li>
<li>List open requisitions separately (Oriel Street and Juniper Wharf both
have two open).</li>
<li>Luc&iacute;a: please include the seasonal barn staff at Hadley Pines as
temporary, not as permanent headcount.</li>
</ul>
<p>Ren&eacute;e and I will review the submissions on July 15 and take the
combined plan to the partners&rsquo; meeting on July 22.</p>
<p>Thanks,<br>Desmond</p>
<p style="color:#555;">Desmond Achterberg<br>
Chief Operating Officer, Tallowbrook Veterinary Partners<br>
(541) 555-0101</p>
</body>
</html>
"""

EMAIL_WELCOME_HEADERS = [
    "Received: from mail.tallowbrookvet.example (mail.tallowbrookvet.example [192.0.2.25])",
    "\tby mx1.mailbox.example with ESMTPS id 4a7c0e19;",
    "\tFri, 02 Jan 2026 18:12:43 +0000",
    "Message-ID: <welcome-tv34410.20260102@tallowbrookvet.example>",
    "Date: Fri, 2 Jan 2026 10:12:40 -0800",
    "From: =?UTF-8?Q?Ren=C3=A9e_Baptiste?= <renee.baptiste@tallowbrookvet.example>",
    "To: =?UTF-8?Q?Hana_Dvo=C5=99=C3=A1kov=C3=A1?= <hana.dvorakova@mailbox.example>",
    "Cc: Malak Nasser <malak.nasser@tallowbrookvet.example>",
    "Subject: =?UTF-8?Q?Welcome_to_Tallowbrook=2C_Hana_=E2=80=93_your_first?=",
    " =?UTF-8?Q?_day_on_Monday?=",
    "MIME-Version: 1.0",
    "Content-Type: text/plain; charset=utf-8",
    "Content-Transfer-Encoding: quoted-printable",
]

EMAIL_WELCOME_BODY = """\
Dear Hana,

Happy new year, and welcome to Tallowbrook Veterinary Partners! We are all
looking forward to Monday, January 5. Here is what to expect on your first
day at the main hospital:

- 8:30 a.m.: ask for Malak Nasser at the main reception on Cobb Avenue.
- 9:00 a.m.: paperwork with me (bring ID for your I-9 and your bank
  details for payroll).
- 11:00 a.m.: tour of the diagnostic laboratory and safety briefing.
- Lunch is on us.

Your employee ID will be TV34410; you will need it to log in to the HR
portal and the scheduling app. Scrubs are provided, closed-toe shoes are
required in the lab.

If anything comes up before Monday, call me on (541) 555-0108.

Warm regards,

Renée Baptiste
Director of People & Culture
Tallowbrook Veterinary Partners
"""

EMAIL_PANEL_REPLY_HEADERS = [
    "Message-ID: <CAKa7-panel-reply-0416@tallowbrookvet.example>",
    "In-Reply-To: <CAIs9-panel-0416@tallowbrookvet.example>",
    "References: <CAIs9-panel-0416@tallowbrookvet.example>",
    "Date: Wed, 16 Apr 2025 21:42:09 -0700",
    "From: Haruto Arakawa <haruto.arakawa@tallowbrookvet.example>",
    "To: =?UTF-8?Q?Sigrid_S=C3=B8rb=C3=B8?= <sigrid.sorbo@tallowbrookvet.example>",
    "Cc: Saanvi Krishnamurthy <saanvi.krishnamurthy@tallowbrookvet.example>",
    "Subject: Re: Interview panel for Associate Veterinarian (Oriel St.)",
    "MIME-Version: 1.0",
    "Content-Type: text/plain; charset=utf-8",
    "Content-Transfer-Encoding: 8bit",
]

EMAIL_PANEL_REPLY_BODY = """\
Hi Sigrid,

Thursday the 24th works for me. Let's do the case discussion at 10:00 in
the Oriel Street conference room and the working interview in the
afternoon with the appointment team. Saanvi, if you can join for the
surgical questions at 10:00 that would be great.

Could you send Dr. Whitlock-Reyes the parking instructions?

Haruto

--
Dr. Haruto Arakawa, DVM
Hospital Manager, Oriel Street Clinic
(541) 555-0163

On Wed, Apr 16, 2025 at 2:10 PM Sigrid Sørbø <sigrid.sorbo@tallowbrookvet.example> wrote:
> Hi Haruto,
>
> Dr. Jonah Whitlock-Reyes is available for an in-person panel interview
> on Thursday, April 24 or Monday, April 28. Which day suits you and Dr.
> Krishnamurthy better? I'd like to confirm with him by Friday.
>
> Thanks,
> Sigrid Sørbø
> Talent Acquisition Coordinator
"""


# --------------------------------------------------------------------------
# writers
# --------------------------------------------------------------------------


def _crlf(text: str) -> str:
    return text.replace("\r\n", "\n").replace("\n", "\r\n")


def _qp(text: str) -> str:
    """Quoted-printable body (UTF-8), LF line breaks."""
    return quopri.encodestring(text.encode("utf-8")).decode("ascii")


def build_email_plain(headers: list[str], body: str, transfer: str) -> bytes:
    if transfer == "quoted-printable":
        payload = _qp(body)
    else:
        payload = body
    text = "\n".join(headers) + "\n\n" + payload
    return _crlf(text).encode("utf-8")


def build_email_alternative(headers: list[str], boundary: str, plain: str, html: str) -> bytes:
    parts = [
        "\n".join(headers),
        "",
        "This is a multi-part message in MIME format.",
        "",
        f"--{boundary}",
        "Content-Type: text/plain; charset=utf-8",
        "Content-Transfer-Encoding: quoted-printable",
        "",
        _qp(plain),
        f"--{boundary}",
        "Content-Type: text/html; charset=utf-8",
        "Content-Transfer-Encoding: quoted-printable",
        "",
        _qp(html),
        f"--{boundary}--",
        "",
    ]
    return _crlf("\n".join(parts)).encode("ascii")


def _deterministic_zip(raw: bytes) -> bytes:
    """Rewrite a zip (docx) with fixed timestamps and a stable entry order."""
    src = zipfile.ZipFile(io.BytesIO(raw))
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", compression=zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            new = zipfile.ZipInfo(info.filename, date_time=(2025, 1, 6, 9, 0, 0))
            new.compress_type = zipfile.ZIP_DEFLATED
            new.external_attr = 0o644 << 16
            dst.writestr(new, src.read(info.filename))
    return out.getvalue()


def build_docx(spec: dict) -> bytes:
    import docx
    from docx.shared import Pt

    document = docx.Document()
    style = document.styles["Normal"]
    style.font.name = "Calibri"
    style.font.size = Pt(11)
    for block in spec["blocks"]:
        kind = block[0]
        if kind == "heading":
            document.add_heading(block[1], level=1)
        elif kind == "p":
            lines = block[1].split("\n")
            para = document.add_paragraph()
            for i, line in enumerate(lines):
                run = para.add_run(line)
                if i < len(lines) - 1:
                    run.add_break()
        elif kind == "table":
            rows = block[1]
            table = document.add_table(rows=len(rows), cols=2)
            table.style = "Table Grid"
            for row, (label, value) in zip(table.rows, rows):
                row.cells[0].text = label
                row.cells[1].text = value
                for run in row.cells[0].paragraphs[0].runs:
                    run.bold = True
            document.add_paragraph()
        else:  # pragma: no cover - spec error
            raise ValueError(kind)
    props = document.core_properties
    props.title = spec["title"]
    props.author = "Tallowbrook Veterinary Partners"
    props.last_modified_by = "Tallowbrook Veterinary Partners"
    props.comments = "Invented demo document for structurize"
    props.created = FIXED_TIME.replace(tzinfo=None)
    props.modified = FIXED_TIME.replace(tzinfo=None)
    props.revision = 1
    buf = io.BytesIO()
    document.save(buf)
    return _deterministic_zip(buf.getvalue())


def build_pdf(spec: dict) -> bytes:
    from fpdf import FPDF

    pdf = FPDF(format="Letter", unit="mm")
    pdf.set_creation_date(FIXED_TIME)
    pdf.set_producer("structurize scripts/make_demo_docs.py")
    pdf.set_creator("structurize scripts/make_demo_docs.py")
    pdf.set_title(spec["title"])
    pdf.set_author("Tallowbrook Veterinary Partners")
    pdf.set_margins(22, 20, 22)
    pdf.set_auto_page_break(False)
    pdf.add_font("DejaVu", "", str(FONT_DIR / "DejaVuSans.ttf"))
    pdf.add_font("DejaVu", "B", str(FONT_DIR / "DejaVuSans-Bold.ttf"))
    width = pdf.w - pdf.l_margin - pdf.r_margin
    for page in spec["pages"]:
        pdf.add_page()
        for block in page:
            kind = block[0]
            if kind == "h":
                pdf.set_font("DejaVu", "B", 15)
                pdf.multi_cell(width, 8, block[1], new_x="LMARGIN", new_y="NEXT")
            elif kind == "h2":
                pdf.set_font("DejaVu", "B", 12.5)
                pdf.multi_cell(width, 7, block[1], new_x="LMARGIN", new_y="NEXT")
                pdf.ln(2)
            elif kind == "h3":
                pdf.set_font("DejaVu", "B", 11)
                pdf.multi_cell(width, 6.5, block[1], new_x="LMARGIN", new_y="NEXT")
            elif kind == "p":
                pdf.set_font("DejaVu", "", 10.5)
                pdf.multi_cell(width, 5.5, block[1], new_x="LMARGIN", new_y="NEXT")
                pdf.ln(3)
            elif kind == "line":
                pdf.set_font("DejaVu", "", 10.5)
                pdf.multi_cell(width, 6.5, block[1], new_x="LMARGIN", new_y="NEXT")
            elif kind == "bullet":
                pdf.set_font("DejaVu", "", 10.5)
                pdf.multi_cell(width, 5.5, "\u2022 " + block[1], new_x="LMARGIN", new_y="NEXT")
                pdf.ln(1)
            elif kind == "small":
                pdf.set_font("DejaVu", "", 8.5)
                pdf.multi_cell(width, 4.5, block[1], new_x="LMARGIN", new_y="NEXT")
                pdf.ln(2)
            elif kind == "gap":
                pdf.ln(5)
            else:  # pragma: no cover - spec error
                raise ValueError(kind)
    return bytes(pdf.output())


def documents() -> dict[str, bytes]:
    """Every demo document, keyed by its path relative to ``demo_docs/``."""
    utf8 = lambda text: text.encode("utf-8")  # noqa: E731
    return {
        "offer_letter/offer_whitlock-reyes.html": utf8(OFFER_WHITLOCK_REYES_HTML),
        "offer_letter/offer_kearney.docx": build_docx(OFFER_KEARNEY_DOCX),
        "offer_letter/offer_ribeiro.pdf": build_pdf(OFFER_RIBEIRO_PDF),
        "offer_letter/offer_dvorakova.txt": utf8(OFFER_DVORAKOVA_TXT),
        "exit_interview/exit_ambrose.md": utf8(EXIT_AMBROSE_MD),
        "exit_interview/exit_sithole.docx": build_docx(EXIT_SITHOLE_DOCX),
        "exit_interview/exit_halvorsen.txt": utf8(EXIT_HALVORSEN_TXT),
        "transfer_request/transfer_fujimura.pdf": build_pdf(TRANSFER_FUJIMURA_PDF),
        "transfer_request/transfer_osei.md": utf8(TRANSFER_OSEI_MD),
        "transfer_request/transfer_sundqvist.html": utf8(TRANSFER_SUNDQVIST_HTML),
        "email/front_desk_saturday_coverage.eml": build_email_plain(
            EMAIL_FRONT_DESK_HEADERS, EMAIL_FRONT_DESK_BODY, "7bit"
        ),
        "email/q3_headcount_templates.eml": build_email_alternative(
            EMAIL_HEADCOUNT_HEADERS, "=_tvp_alt_7d41c2", EMAIL_HEADCOUNT_TEXT, EMAIL_HEADCOUNT_HTML
        ),
        "email/welcome_first_day.eml": build_email_plain(
            EMAIL_WELCOME_HEADERS, EMAIL_WELCOME_BODY, "quoted-printable"
        ),
        "email/re_interview_panel.eml": build_email_plain(
            EMAIL_PANEL_REPLY_HEADERS, EMAIL_PANEL_REPLY_BODY, "8bit"
        ),
    }


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument(
        "--out", type=Path, default=ROOT / "demo_docs", help="output folder (default: demo_docs/)"
    )
    args = parser.parse_args(argv)
    for rel, data in documents().items():
        path = args.out / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(data)
        print(f"wrote {path} ({len(data)} bytes)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
