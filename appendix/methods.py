"""Method descriptions and references for the appendix's methods section, as typed data.

Each `Method` names a published procedure, says in a sentence or two what was computed,
and lists the keys of its references. `methods_used` picks the methods that the results
say were run, so that the section never describes an analysis that did not happen.
References are stored in parts so that the template can set them in APA 7 style; the
bibliographic details were written from memory and are worth a check against the
publishers' records before a release.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any


@dataclass(frozen=True)
class Reference:
    """One entry of the reference list, in the parts APA 7 sets differently.

    A journal article has `journal`, `volume` and `pages` (italic journal and volume);
    a book has `publisher` and an italic title. `edition` reads like ``2nd ed.``.
    """

    key: str
    authors: str
    year: int
    title: str
    journal: str | None = None
    volume: str | None = None
    issue: str | None = None
    pages: str | None = None
    publisher: str | None = None
    edition: str | None = None
    doi: str | None = None

    @property
    def is_article(self) -> bool:
        return self.journal is not None


def _article(key, authors, year, title, journal, volume, issue, pages, doi) -> Reference:
    return Reference(key, authors, year, title, journal=journal, volume=volume, issue=issue,
                     pages=pages, doi=doi)


def _book(key, authors, year, title, publisher, edition=None, doi=None) -> Reference:
    return Reference(key, authors, year, title, publisher=publisher, edition=edition, doi=doi)


@dataclass(frozen=True)
class Method:
    """A published method: its name, what the appendix did with it, and its references."""

    key: str
    name: str
    text: str
    references: tuple[str, ...]


REFERENCES: Mapping[str, Reference] = MappingProxyType({r.key: r for r in (
    _book("apa2020", "American Psychological Association", 2020, "Publication manual of the "
          "American Psychological Association", "American Psychological Association", "7th ed.",
          "10.1037/0000165-000"),
    _article("bartlett1937", "Bartlett, M. S.", 1937, "Properties of sufficiency and "
             "statistical tests", "Proceedings of the Royal Society of London. Series A",
             "160", "901", "268\u2013282", "10.1098/rspa.1937.0109"),
    _book("blom1958", "Blom, G.", 1958, "Statistical estimates and transformed beta-variables",
          "Wiley"),
    _article("brown1974", "Brown, M. B., & Forsythe, A. B.", 1974, "Robust tests for the "
             "equality of variances", "Journal of the American Statistical Association", "69",
             "346", "364\u2013367", "10.1080/01621459.1974.10482955"),
    _book("cohen1988", "Cohen, J.", 1988, "Statistical power analysis for the behavioral "
          "sciences", "Lawrence Erlbaum Associates", "2nd ed."),
    _book("cook1982", "Cook, R. D., & Weisberg, S.", 1982, "Residuals and influence in "
          "regression", "Chapman and Hall"),
    _book("fisher1925", "Fisher, R. A.", 1925, "Statistical methods for research workers",
          "Oliver and Boyd"),
    _book("hays1963", "Hays, W. L.", 1963, "Statistics for psychologists",
          "Holt, Rinehart and Winston"),
    _article("hyndman1996", "Hyndman, R. J., & Fan, Y.", 1996, "Sample quantiles in "
             "statistical packages", "The American Statistician", "50", "4", "361\u2013365",
             "10.1080/00031305.1996.10473566"),
    _article("kruskal1952", "Kruskal, W. H., & Wallis, W. A.", 1952, "Use of ranks in "
             "one-criterion variance analysis", "Journal of the American Statistical "
             "Association", "47", "260", "583\u2013621", "10.1080/01621459.1952.10483441"),
    _article("mccullough1998", "McCullough, B. D.", 1998, "Assessing the reliability of "
             "statistical software: Part I", "The American Statistician", "52", "4",
             "358\u2013366", "10.1080/00031305.1998.10480586"),
    _article("olejnik2003", "Olejnik, S., & Algina, J.", 2003, "Generalized eta and omega "
             "squared statistics: Measures of effect size for some common research designs",
             "Psychological Methods", "8", "4", "434\u2013447", "10.1037/1082-989X.8.4.434"),
    _article("rochon2012", "Rochon, J., Gondan, M., & Kieser, M.", 2012, "To test or not to "
             "test: Preliminary assessment of normality when comparing two independent "
             "samples", "BMC Medical Research Methodology", "12", None, "81",
             "10.1186/1471-2288-12-81"),
    _article("royston1995", "Royston, P.", 1995, "Remark AS R94: A remark on algorithm AS 181: "
             "The W-test for normality", "Journal of the Royal Statistical Society. Series C "
             "(Applied Statistics)", "44", "4", "547\u2013551", "10.2307/2986146"),
    _article("shapiro1965", "Shapiro, S. S., & Wilk, M. B.", 1965, "An analysis of variance "
             "test for normality (complete samples)", "Biometrika", "52", "3\u20134",
             "591\u2013611", "10.1093/biomet/52.3-4.591"),
    _article("steiger2004", "Steiger, J. H.", 2004, "Beyond the F test: Effect size confidence "
             "intervals and tests of close fit in the analysis of variance and contrast "
             "analysis", "Psychological Methods", "9", "2", "164\u2013182",
             "10.1037/1082-989X.9.2.164"),
    _article("welch1951", "Welch, B. L.", 1951, "On the comparison of several mean values: An "
             "alternative approach", "Biometrika", "38", "3\u20134", "330\u2013336",
             "10.1093/biomet/38.3-4.330"),
    _article("zimmerman2004", "Zimmerman, D. W.", 2004, "A note on preliminary tests of "
             "equality of variances", "British Journal of Mathematical and Statistical "
             "Psychology", "57", "1", "173\u2013181", "10.1348/000711004849222"),
)})

METHODS: Mapping[str, Method] = MappingProxyType({m.key: m for m in (
    Method("descriptives", "Descriptive statistics",
           "Per group: the number of units analysed and missing, the mean with its standard "
           "deviation (n \u2212 1 divisor), standard error and a confidence interval from "
           "Student's t on n \u2212 1 degrees of freedom, and the median, quartiles, minimum "
           "and maximum. Quartiles use linear interpolation between order statistics "
           "(Hyndman & Fan, 1996, definition 7).",
           ("hyndman1996",)),
    Method("anova", "One-way analysis of variance (F test)",
           "The classical one-way analysis of variance (Fisher, 1925) partitions the total "
           "sum of squares into between-group and within-group parts. The ratio of their "
           "mean squares is referred to the F distribution on (k \u2212 1, N \u2212 k) "
           "degrees of freedom; the p value is the right-tail probability. The test assumes "
           "independent units, normally distributed errors and equal group variances.",
           ("fisher1925",)),
    Method("welch", "Welch's heteroscedastic F test",
           "Welch's (1951) test compares the group means without assuming equal variances; "
           "groups are weighted by n/s\u00b2 and the denominator degrees of freedom are "
           "estimated, so they are generally fractional.",
           ("welch1951",)),
    Method("kruskal", "Kruskal\u2013Wallis rank test",
           "The Kruskal\u2013Wallis H test (Kruskal & Wallis, 1952) compares the groups' mean "
           "ranks. H is divided by the tie correction 1 \u2212 \u03a3(t\u00b3 \u2212 t)/(N\u00b3 "
           "\u2212 N) and referred to the chi-squared distribution on k \u2212 1 degrees of "
           "freedom.",
           ("kruskal1952",)),
    Method("effect_sizes", "Effect sizes with confidence intervals",
           "Eta squared (the share of the total sum of squares between groups), omega squared "
           "(a less biased estimate of the population share; Hays, 1963; Olejnik & Algina, "
           "2003) and Cohen's f (Cohen, 1988). Confidence intervals invert the noncentral F "
           "distribution: the limits of the noncentrality parameter are found for which the "
           "observed F is at the required quantiles, and are transformed to each measure "
           "(Steiger, 2004).",
           ("hays1963", "olejnik2003", "cohen1988", "steiger2004")),
    Method("shapiro", "Shapiro\u2013Wilk test of normality",
           "The Shapiro\u2013Wilk W test (Shapiro & Wilk, 1965) is applied to the residuals of "
           "the one-way model (each value minus its group mean), with coefficients and p "
           "value from Royston's (1995) algorithm. The normal Q-Q plot uses Blom's (1958) "
           "plotting positions.",
           ("shapiro1965", "royston1995", "blom1958")),
    Method("brown-forsythe", "Brown\u2013Forsythe test of equal variances",
           "The Brown\u2013Forsythe test (Brown & Forsythe, 1974) is the one-way analysis of "
           "variance of the absolute deviations of each value from its group median; it is "
           "robust to non-normal data.",
           ("brown1974",)),
    Method("bartlett", "Bartlett's test of equal variances",
           "Bartlett's (1937) test compares the pooled and the group variances on the log "
           "scale; the statistic is referred to chi-squared on k \u2212 1 degrees of freedom. "
           "It is sensitive to non-normal data.",
           ("bartlett1937",)),
    Method("outliers", "Outlying units",
           "Units whose externally studentized residual (Cook & Weisberg, 1982) exceeds the "
           "plan's threshold in absolute value are listed. They are reported, not removed: "
           "only registered exclusion rules remove units.",
           ("cook1982",)),
    Method("pretest", "Diagnostics are shown, not used to choose the test",
           "Choosing a test by the outcome of a preliminary test of an assumption distorts "
           "the error rates (Zimmerman, 2004; Rochon et al., 2012). The diagnostics in this "
           "appendix are therefore reported beside the registered analysis, which they do "
           "not change.",
           ("zimmerman2004", "rochon2012")),
    Method("reporting", "Reporting",
           "Statistics are reported in APA style (American Psychological Association, 2020): "
           "test statistic with its degrees of freedom, exact p to three decimals (\u201c< "
           ".001\u201d below that), and estimates with their confidence intervals in brackets.",
           ("apa2020",)),
)})


def _ran(outcomes: list[dict[str, Any]], test) -> bool:
    return any(test(o) for o in outcomes)


def methods_used(results: Mapping[str, Any]) -> tuple[Method, ...]:
    """The methods that `results` (parsed results.json) show were run, in appendix order."""
    outcomes = list(results["outcomes"])
    variance_methods = {t["method"] for o in outcomes for t in o["diagnostics"]["equal_variance"]}
    chosen = ["descriptives", "anova"]
    chosen += ["welch"] if _ran(outcomes, lambda o: o["welch"]["f"] is not None) else []
    chosen += ["kruskal"] if _ran(outcomes, lambda o: o["kruskal"]["h"] is not None) else []
    chosen += ["effect_sizes"] if _ran(outcomes, lambda o: o["effect_sizes"]) else []
    chosen += ["shapiro"] if _ran(outcomes, lambda o: o["diagnostics"]["normality"]) else []
    chosen += [m for m in ("brown-forsythe", "bartlett") if m in variance_methods]
    chosen += ["outliers"] if _ran(outcomes, lambda o: o["diagnostics"]["outliers"]) else []
    chosen += ["pretest", "reporting"]
    return tuple(METHODS[key] for key in chosen)


def references_for(methods: tuple[Method, ...]) -> tuple[Reference, ...]:
    """The references cited by `methods`, alphabetical as APA orders a reference list."""
    keys = {key for method in methods for key in method.references}
    return tuple(sorted((REFERENCES[k] for k in keys), key=lambda r: (r.authors, r.year)))
