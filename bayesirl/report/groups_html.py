"""The report's section on several demonstrators, from the plain record of
:func:`bayesirl.posterior.group_summary.demonstrator_summary` (never from the model).

Three parts, in the order a reader asks: the population (what people value on average, and
what to expect of the next person), the spread (do they differ, feature by feature, in plain
words), and the individuals (each one's weights, partially pooled and from their own
episodes alone, with the forest plot). :func:`preamble` and :func:`weights_note` say in the
verdict and above the weights table that those describe the population mean, not a person.
"""

from __future__ import annotations

from html import escape

from bayesirl.report.html_parts import figure, interval, num, table

SECTION_ID = "demonstrators"
TITLE = "Several demonstrators"
# Plain words for the heterogeneity verdict of each feature.
PLAIN = {"differ": "they clearly differ", "agree": "they agree (within {neg:g})",
         "unclear": "the data cannot tell", "pinned": "pinned (the same for everyone)"}


def preamble(record: dict) -> str:
    """The first sentences of the report's verdict for a group run."""
    n = len(record["demonstrators"])
    if record["pooling"] != "partial":
        return ""
    return (f"These demonstrations come from {n} demonstrators, modelled with partial "
            "pooling: the weights below are the population mean (what they value on "
            "average), not any one demonstrator's. "
            + record["heterogeneity"]["sentence"][0].upper()
            + record["heterogeneity"]["sentence"][1:] + f" (at the {record['level']:.0%} "
            "level; see Several demonstrators).")


def weights_note(report) -> str:
    """A note above the weights table of a group run (empty otherwise)."""
    record = getattr(report, "demonstrators", None)
    if record is None or record["pooling"] != "partial":
        return ""
    return ('<p class="note"><strong>Population mean.</strong> With several demonstrators '
            "this table describes the population mean weights. A single demonstrator, and "
            "the next one you meet, can lie well outside these intervals: see "
            f'<a href="#{SECTION_ID}">{TITLE}</a> for the spread between them and for what '
            "to expect of a new demonstrator.</p>")


def section(report) -> str:
    """The section of ``report`` (empty when it has no demonstrators' record)."""
    record = getattr(report, "demonstrators", None)
    if record is None:
        return ""
    from bayesirl.report.forest import forest_figure

    return render(record, forest_figure(record))


def render(record: dict | None, forest=None) -> str:
    """The section (empty without a record); ``forest`` is the forest plot's figure."""
    if record is None:
        return ""
    lvl = f"{record['level']:.0%}"
    parts = []
    if record["pooling"] == "partial":
        parts.append(_population(record, lvl))
    else:
        parts.append('<p class="note">Separate rewards: each demonstrator has their own '
                     "weights and nothing is shared, so there is no population mean and "
                     "no prediction for a new demonstrator.</p>")
    parts.append(_individuals(record, lvl))
    parts.append(_rationalities(record, lvl))
    parts.append(figure(
        forest, "forest plot of each demonstrator's weights",
        f"Each demonstrator's weights ({lvl} intervals, black) with, just above in grey, the "
        "estimate from their own episodes alone; the shaded band is the population mean's "
        "interval and the last row (open circle) is a new demonstrator.",
        "The forest plot was not drawn."))
    return (f'<section id="{SECTION_ID}"><h2>{escape(TITLE)}</h2>' + "".join(parts)
            + "</section>")


def _population(record: dict, lvl: str) -> str:
    het = record["heterogeneity"]
    neg = het["negligible"]
    rows = []
    for name in record["features"]:
        word = het["verdicts"].get(name, "")
        rows.append([name, num(record["population"][name]["mean"]),
                     interval(_pair(record["population"][name])),
                     num(record["spread"][name]["mean"]),
                     interval(_pair(record["spread"][name])),
                     PLAIN.get(word, word).format(neg=neg),
                     interval(_pair(record["new_demonstrator"][name]))])
    head = ["feature", "population mean", f"{lvl} interval", "spread (sd across people)",
            f"{lvl} interval", "do they differ?", f"a new demonstrator, {lvl} interval"]
    return (f"<p>{escape(het['sentence'][0].upper() + het['sentence'][1:])}.</p>"
            + table(head, rows, "lrrrrlr")
            + f'<p class="note">"They clearly differ" when the spread\'s whole {lvl} '
            f"interval lies above {neg:g}, \"they agree\" when it lies below {neg:g}, "
            "otherwise the data cannot tell. A new demonstrator's interval is the posterior "
            "predictive of the population model (population mean plus spread times a fresh "
            "standard normal, per draw): it is wider than the population mean's because it "
            "includes how much people differ.</p>")


def _individuals(record: dict, lvl: str) -> str:
    names = record["features"]
    alone = any("alone" in r for r in record["demonstrators"].values())
    head = ["demonstrator", "steps"] + [f"{n} ({lvl})" for n in names]
    rows = []
    for who, r in record["demonstrators"].items():
        rows.append([who, str(r["steps"])] + [_cell(r["weights"][n]) for n in names])
        if alone:
            own = r.get("alone", {})
            rows.append(["  alone", ""] + [_cell(own[n]) if n in own else
                                           own.get("failed", "-") for n in names])
    note = ""
    if alone:
        note = (f'<p class="note">"alone": from that demonstrator\'s own episodes only '
                f"({escape(record.get('alone_method', ''))}; the number is the mode). The "
                "distance between the two rows is the shrinkage: a demonstrator with few "
                "steps is pulled further towards the population.</p>")
    return table(head, rows, "lr" + "r" * len(names)) + note


def _rationalities(record: dict, lvl: str) -> str:
    """Each demonstrator's rationality with its interval (empty when they share one)."""
    own = [(who, r["rationality"]) for who, r in record["demonstrators"].items()
           if "rationality" in r]
    if not own:
        return ""
    rows = [[f"{who} ({record['demonstrators'][who]['steps']} steps)", num(r["mean"]),
             interval(_pair(r))] for who, r in own]
    if "population_rationality" in record:
        pop = record["population_rationality"]
        rows.insert(0, ["population", num(pop["mean"]), interval(_pair(pop))])
    return ("<h3>Rationality of each demonstrator</h3>"
            + table(["", "rationality (mean)", f"{lvl} interval"], rows, "lrr")
            + '<p class="note">Each demonstrator has their own rationality around the '
            "population's (log-normal spread). Its scale is tied to the weights' scale: a "
            "demonstrator's rationality times their weights is all their episodes show, so a "
            "high value means choices that follow those weights closely, a low one choices "
            "closer to random.</p>")


def _pair(r: dict) -> tuple[float, float]:
    return (r["lower"], r["upper"])


def _cell(r: dict) -> str:
    return f"{num(r['mean'])} {interval(_pair(r))}"
