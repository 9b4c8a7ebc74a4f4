"""The quote PDF for the client: firm and client, scope, lines, totals, terms, cautions."""

from __future__ import annotations

from decimal import Decimal

from reportlab.lib.units import mm
from reportlab.platypus import Flowable, KeepTogether, Spacer, Table, TableStyle

from server import pdf
from server.quotes.service import QuoteSheet, plain
from server.safety import CADMIUM, LAMP_VOLTAGE, QUALIFIED_PERSON, STAYS_LIVE

KIND_LABELS = {
    "material": "Materials",
    "labour": "Labour",
    "supply": "New supply",
    "sundry": "Sundries",
    "manual": "Other",
}


def money(value: Decimal, currency: str) -> str:
    return f"{currency} {value:,.2f}"


def _quantity(value: Decimal) -> str:
    return f"{value.normalize():,f}"


def _blocks(sheet: QuoteSheet, width_pt: float) -> Table:
    quote = sheet.quote
    firm = [pdf.para(pdf.bold(sheet.firm_name), markup=True)]
    firm += [pdf.para(text, "small") for text in (sheet.firm_address, sheet.firm_phone) if text]
    client = [pdf.para("Prepared for", "small")]
    client += [pdf.para(pdf.bold(quote.client_name or "(client not named)"), markup=True)]
    client += [
        pdf.para(text, "small") for text in (quote.client_address, quote.client_contact) if text
    ]
    site = [pdf.para("Building", "small"), pdf.para(pdf.bold(quote.building_name), markup=True)]
    if sheet.building_address:
        site.append(pdf.para(sheet.building_address, "small"))
    terms = [
        pdf.para(f"Quote {pdf.bold(quote.number)}", markup=True),
        pdf.para(f"Dated {sheet.dated.isoformat()}", "small"),
        pdf.para(
            f"Valid until {quote.valid_until.isoformat()}" if quote.valid_until else "", "small"
        ),
        pdf.para(f"Status: {quote.state}", "small"),
    ]
    table = Table(
        [[firm, terms], [client, site]],
        colWidths=[width_pt * 0.55, width_pt * 0.45],
        hAlign="LEFT",
    )
    table.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("LINEBELOW", (0, 0), (-1, 0), 0.5, pdf.RULE),
                ("TOPPADDING", (0, 1), (-1, 1), 6),
                ("LEFTPADDING", (0, 0), (-1, -1), 0),
            ]
        )
    )
    return table


def _lines_table(sheet: QuoteSheet, width_pt: float) -> Table:
    quote = sheet.quote
    header = ["#", "Description", "Qty", "Unit", "Unit price", "Amount"]
    # Only the description wraps; the other cells are plain strings, drawn as they are
    # (no markup is read from them), which keeps a 2,000-line quote quick to lay out.
    numeric = {"Qty", "Unit price", "Amount"}
    rows: list[list[object]] = [
        [
            pdf.para(pdf.bold(text), "cell_right", markup=True)
            if text in numeric
            else pdf.para(text, "cell_bold")
            for text in header
        ]
    ]
    for number, line in enumerate(quote.lines, start=1):
        marker = " \u2020" if line.override_reason else ""
        rows.append(
            [
                str(number),
                pdf.para(
                    f"{pdf.escape(line.description)}{marker}"
                    f"<br/><font color='#5a6472'>{KIND_LABELS.get(line.kind, line.kind)}</font>",
                    "cell",
                    markup=True,
                ),
                _quantity(line.quantity),
                line.unit,
                f"{line.unit_price:,.2f}",
                f"{line.amount:,.2f}",
            ]
        )
    widths = [8 * mm, None, 16 * mm, 12 * mm, 22 * mm, 24 * mm]
    fixed = sum(w for w in widths if w)
    table = Table(
        rows,
        colWidths=[w if w else width_pt - fixed for w in widths],
        repeatRows=1,
        hAlign="LEFT",
    )
    table.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("FONTNAME", (0, 1), (-1, -1), pdf.FONT_CONDENSED),
                ("FONTSIZE", (0, 1), (-1, -1), 8),
                ("TEXTCOLOR", (0, 1), (-1, -1), pdf.INK),
                ("ALIGN", (2, 1), (2, -1), "RIGHT"),
                ("ALIGN", (4, 1), (5, -1), "RIGHT"),
                ("LINEBELOW", (0, 0), (-1, 0), 0.8, pdf.INK),
                ("LINEBELOW", (0, 1), (-1, -1), 0.25, pdf.RULE),
                ("TOPPADDING", (0, 0), (-1, -1), 2),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
            ]
        )
    )
    return table


def _totals_table(sheet: QuoteSheet, width_pt: float) -> Table:
    quote, totals, currency = sheet.quote, sheet.quote.totals, sheet.quote.currency
    rows = [["Subtotal", money(totals.subtotal, currency)]]
    if quote.markup_pct:
        rows.append(
            [
                f"Overheads and margin ({plain(quote.markup_pct)} %)",
                money(totals.markup, currency),
            ]
        )
    if quote.discount_pct:
        rows.append(
            [
                f"Discount ({plain(quote.discount_pct)} %)",
                f"\u2212 {money(totals.discount, currency)}",
            ]
        )
    if quote.markup_pct or quote.discount_pct:
        rows.append(["Net", money(totals.net, currency)])
    rows.append([f"Tax ({plain(quote.tax_pct)} %)", money(totals.tax, currency)])
    rows.append(["Total", money(totals.total, currency)])
    cells = [
        [
            pdf.para(label, "cell_bold" if label == "Total" else "cell"),
            pdf.para(
                pdf.bold(value) if label == "Total" else pdf.escape(value),
                "cell_right",
                markup=True,
            ),
        ]
        for label, value in rows
    ]
    table = Table(cells, colWidths=[50 * mm, 34 * mm], hAlign="RIGHT")
    table.setStyle(
        TableStyle(
            [
                ("LINEABOVE", (0, -1), (-1, -1), 1, pdf.INK),
                ("TOPPADDING", (0, 0), (-1, -1), 1.5),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
            ]
        )
    )
    return table


def _bullets(items: list[str]) -> list[Flowable]:
    return [
        pdf.Paragraph(pdf.escape(text), pdf.STYLES["body"], bulletText="\u2022") for text in items
    ]


def quote_pdf(sheet: QuoteSheet) -> bytes:
    """The client's quote as PDF bytes."""
    quote = sheet.quote
    frame = pdf.PageFrame(
        title="Quote",
        reference=quote.number,
        building=quote.building_name,
        organisation=sheet.firm_name,
        paper_size=sheet.paper_size,
    )
    width = frame.content_width_pt
    story: list[Flowable] = [
        pdf.para("Quote for emergency lighting conversion", "title"),
        _blocks(sheet, width),
        pdf.heading("Scope of work"),
        *[pdf.para(text) for text in sheet.scope],
        pdf.heading("Prices"),
        _lines_table(sheet, width),
        Spacer(1, 3 * mm),
        KeepTogether([_totals_table(sheet, width)]),
        pdf.para(
            f"Prices are in {quote.currency} and hold until "
            f"{quote.valid_until.isoformat() if quote.valid_until else 'further notice'}."
            " Work found on site beyond what is assumed below is quoted separately.",
            "small",
        ),
    ]
    if sheet.overrides:
        story += [
            pdf.heading("\u2020 Luminaires quoted although a check fails"),
            pdf.para(
                "The planner's checks do not pass for these luminaires; they are quoted on the "
                "estimator's stated reason, to be confirmed by the qualified person responsible:",
            ),
            *_bullets([f"{tag}: {reason}" for tag, reason in sheet.overrides]),
        ]
    story += [pdf.heading("What this quote assumes"), *_bullets(sheet.surveyed)]
    if sheet.not_accessible:
        story += [pdf.para("Not accessible at the survey:"), *_bullets(sheet.not_accessible)]
    if sheet.not_quoted:
        story += [pdf.para("Surveyed but not in this quote:"), *_bullets(sheet.not_quoted)]
    if quote.assumptions:
        story.append(pdf.para(quote.assumptions))
    story.append(
        KeepTogether(
            [
                pdf.heading("Life safety"),
                pdf.para(QUALIFIED_PERSON),
                Spacer(1, 2 * mm),
                pdf.cautions_box(
                    (STAYS_LIVE, LAMP_VOLTAGE, CADMIUM),
                    title="Cautions for anyone working on these luminaires",
                    width_pt=width,
                ),
            ]
        )
    )
    return pdf.build_pdf(story, frame)
