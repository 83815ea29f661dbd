"""Method descriptions and references for the appendix's methods section, as typed data.

Each `Method` names a published procedure, says in a sentence or two what was computed,
and lists the keys of its references. `methods_used` picks the methods that the typed results
(`appendix.results.StudyResults`) say were run, so that the section never describes an analysis that did not happen.
References are stored in parts so that the template can set them in APA 7 style; the
bibliographic details were written from memory and are worth a check against the
publishers' records before a release.
"""

from __future__ import annotations

import dataclasses

import unicodedata
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

from appendix.results import (ContrastFamily, ModelTable, OutcomeResult, RegisteredFamily,
                              StudyResults)

#: The assumption tests by their published names, as sentences write them.
TEST_NAMES = {
    "shapiro-wilk": "Shapiro–Wilk",
    "brown-forsythe": "Brown–Forsythe",
    "bartlett": "Bartlett",
}

#: The conditions a registered fallback rule answers (`Contingency.when`), in words.
FALLBACK_CONDITIONS = {"unequal-variance": "unequal variances", "non-normal": "non-normal errors"}

#: The analyses a fallback rule selects, as sentences name them.
ANALYSIS_NAMES = {"classical": "classical", "welch": "Welch", "rank-based": "rank-based"}



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
    editors: str | None = None
    book: str | None = None

    @property
    def is_article(self) -> bool:
        return self.journal is not None

    @property
    def is_chapter(self) -> bool:
        """A chapter in an edited book: `book` (italic) with its `editors` and `pages`."""
        return self.book is not None


def _article(key, authors, year, title, journal, volume, issue, pages, doi) -> Reference:
    return Reference(key, authors, year, title, journal=journal, volume=volume, issue=issue,
                     pages=pages, doi=doi)


def _book(key, authors, year, title, publisher, edition=None, doi=None) -> Reference:
    return Reference(key, authors, year, title, publisher=publisher, edition=edition, doi=doi)


def _chapter(key, authors, year, title, editors, book, pages, publisher) -> Reference:
    return Reference(key, authors, year, title, pages=pages, publisher=publisher,
                     editors=editors, book=book)


@dataclass(frozen=True)
class Method:
    """A published method: its name, what the appendix did with it, and its references."""

    key: str
    name: str
    text: str
    references: tuple[str, ...]


# All entries from memory, including the contrast and multiplicity references of issue 3.
# The DOIs of Kramer, Satterthwaite, Sidak, Games & Howell and Dunn (1964) agree with
# citations found in public code; Tukey's 1953 manuscript, the Maurer et al. chapter and
# Westfall & Krishen (no DOI given) are the least certain.
REFERENCES: Mapping[str, Reference] = MappingProxyType({r.key: r for r in (
    _book("apa2020", "American Psychological Association", 2020, "Publication manual of the "
          "American Psychological Association", "American Psychological Association", "7th ed.",
          "10.1037/0000165-000"),
    _article("bartlett1937", "Bartlett, M. S.", 1937, "Properties of sufficiency and "
             "statistical tests", "Proceedings of the Royal Society of London. Series A",
             "160", "901", "268\u2013282", "10.1098/rspa.1937.0109"),
    _article("benjamini1995", "Benjamini, Y., & Hochberg, Y.", 1995, "Controlling the false "
             "discovery rate: A practical and powerful approach to multiple testing",
             "Journal of the Royal Statistical Society. Series B (Methodological)", "57", "1",
             "289\u2013300", "10.1111/j.2517-6161.1995.tb02031.x"),
    _book("blom1958", "Blom, G.", 1958, "Statistical estimates and transformed beta-variables",
          "Wiley"),
    _article("bretz2009", "Bretz, F., Maurer, W., Brannath, W., & Posch, M.", 2009, "A graphical "
             "approach to sequentially rejective multiple test procedures", "Statistics in "
             "Medicine", "28", "4", "586\u2013604", "10.1002/sim.3495"),
    _article("bretz2011", "Bretz, F., Posch, M., Glimm, E., Klinglmueller, F., Maurer, W., & "
             "Rohmeyer, K.", 2011, "Graphical approaches for multiple comparison procedures using "
             "weighted Bonferroni, Simes, or parametric tests", "Biometrical Journal", "53", "6",
             "894\u2013913", "10.1002/bimj.201000239"),
    _article("brown1974", "Brown, M. B., & Forsythe, A. B.", 1974, "Robust tests for the "
             "equality of variances", "Journal of the American Statistical Association", "69",
             "346", "364\u2013367", "10.1080/01621459.1974.10482955"),
    _book("cohen1988", "Cohen, J.", 1988, "Statistical power analysis for the behavioral "
          "sciences", "Lawrence Erlbaum Associates", "2nd ed."),
    _book("cook1982", "Cook, R. D., & Weisberg, S.", 1982, "Residuals and influence in "
          "regression", "Chapman and Hall"),
    _article("chan1983", "Chan, T. F., Golub, G. H., & LeVeque, R. J.", 1983, "Algorithms for "
             "computing the sample variance: Analysis and recommendations",
             "The American Statistician", "37", "3", "242\u2013247",
             "10.1080/00031305.1983.10483115"),
    _article("dunn1961", "Dunn, O. J.", 1961, "Multiple comparisons among means",
             "Journal of the American Statistical Association", "56", "293", "52\u201364",
             "10.1080/01621459.1961.10482090"),
    _article("dunn1964", "Dunn, O. J.", 1964, "Multiple comparisons using rank sums",
             "Technometrics", "6", "3", "241\u2013252", "10.1080/00401706.1964.10490181"),
    _article("dmitrienko2007", "Dmitrienko, A., & Tamhane, A. C.", 2007, "Gatekeeping procedures "
             "with clinical trial applications", "Pharmaceutical Statistics", "6", "3",
             "171\u2013180", "10.1002/pst.291"),
    _article("dunnett1955", "Dunnett, C. W.", 1955, "A multiple comparison procedure for "
             "comparing several treatments with a control", "Journal of the American "
             "Statistical Association", "50", "272", "1096\u20131121",
             "10.1080/01621459.1955.10501294"),
    _book("fisher1925", "Fisher, R. A.", 1925, "Statistical methods for research workers",
          "Oliver and Boyd"),
    _book("fisher1938", "Fisher, R. A., & Yates, F.", 1938, "Statistical tables for "
          "biological, agricultural and medical research", "Oliver and Boyd"),
    _article("games1976", "Games, P. A., & Howell, J. F.", 1976, "Pairwise multiple comparison "
             "procedures with unequal n's and/or variances: A Monte Carlo study", "Journal of "
             "Educational Statistics", "1", "2", "113\u2013125", "10.3102/10769986001002113"),
    _article("hasler2008", "Hasler, M., & Hothorn, L. A.", 2008, "Multiple contrast tests in "
             "the presence of heteroscedasticity", "Biometrical Journal", "50", "5",
             "793\u2013800", None),
    _book("hays1963", "Hays, W. L.", 1963, "Statistics for psychologists",
          "Holt, Rinehart and Winston"),
    _article("hedges1981", "Hedges, L. V.", 1981, "Distribution theory for Glass's estimator of "
             "effect size and related estimators", "Journal of Educational Statistics", "6", "2",
             "107\u2013128", "10.3102/10769986006002107"),
    _article("genz2002", "Genz, A., & Bretz, F.", 2002, "Comparison of methods for the "
             "computation of multivariate t probabilities", "Journal of Computational and "
             "Graphical Statistics", "11", "4", "950\u2013971", "10.1198/106186002394"),
    _article("hochberg1988", "Hochberg, Y.", 1988, "A sharper Bonferroni procedure for multiple "
             "tests of significance", "Biometrika", "75", "4", "800\u2013802",
             "10.1093/biomet/75.4.800"),
    _article("holm1979", "Holm, S.", 1979, "A simple sequentially rejective multiple test "
             "procedure", "Scandinavian Journal of Statistics", "6", "2", "65\u201370", None),
    _article("hyndman1996", "Hyndman, R. J., & Fan, Y.", 1996, "Sample quantiles in "
             "statistical packages", "The American Statistician", "50", "4", "361\u2013365",
             "10.1080/00031305.1996.10473566"),
    _book("ich1998", "International Conference on Harmonisation", 1998, "ICH harmonised "
          "tripartite guideline E9: Statistical principles for clinical trials",
          "International Conference on Harmonisation"),
    _book("kirk2013", "Kirk, R. E.", 2013, "Experimental design: Procedures for the behavioral "
          "sciences", "SAGE", "4th ed."),
    _article("kramer1956", "Kramer, C. Y.", 1956, "Extension of multiple range tests to group "
             "means with unequal numbers of replications", "Biometrics", "12", "3",
             "307\u2013310", "10.2307/3001469"),
    _article("kruskal1952", "Kruskal, W. H., & Wallis, W. A.", 1952, "Use of ranks in "
             "one-criterion variance analysis", "Journal of the American Statistical "
             "Association", "47", "260", "583\u2013621", "10.1080/01621459.1952.10483441"),
    _chapter("maurer1995", "Maurer, W., Hothorn, L. A., & Lehmacher, W.", 1995, "Multiple "
             "comparisons in drug clinical trials and preclinical assays: A-priori ordered "
             "hypotheses", "J. Vollmar (Ed.)", "Biometrie in der chemisch-pharmazeutischen "
             "Industrie: Vol. 6. Testing principles in clinical and preclinical trials",
             "3\u201318", "Gustav Fischer"),
    _book("nemenyi1963", "Nemenyi, P. B.", 1963, "Distribution-free multiple comparisons",
          "Doctoral dissertation, Princeton University"),
    _book("maxwell2004", "Maxwell, S. E., & Delaney, H. D.", 2004, "Designing experiments and "
          "analyzing data: A model comparison perspective", "Lawrence Erlbaum Associates",
          "2nd ed."),
    _article("mccullough1998", "McCullough, B. D.", 1998, "Assessing the reliability of "
             "statistical software: Part I", "The American Statistician", "52", "4",
             "358\u2013366", "10.1080/00031305.1998.10480586"),
    _article("hothorn2008", "Hothorn, T., Bretz, F., & Westfall, P.", 2008, "Simultaneous "
             "inference in general parametric models", "Biometrical Journal", "50", "3",
             "346\u2013363", "10.1002/bimj.200810425"),
    _article("greenhouse1959", "Greenhouse, S. W., & Geisser, S.", 1959, "On methods in the "
             "analysis of profile data", "Psychometrika", "24", "2", "95\u2013112",
             "10.1007/BF02289823"),
    _article("huynh1976", "Huynh, H., & Feldt, L. S.", 1976, "Estimation of the Box correction "
             "for degrees of freedom from sample data in randomized block and split-plot designs",
             "Journal of Educational Statistics", "1", "1", "69\u201382", "10.3102/10769986001001069"),
    _article("lecoutre1991", "Lecoutre, B.", 1991, "A correction for the \u03b5\u0303 "
             "approximate test in repeated measures designs with two or more independent groups",
             "Journal of Educational Statistics", "16", "4", "371\u2013372",
             "10.3102/10769986016004371"),
    _article("obrien1985", "O'Brien, R. G., & Kaiser, M. K.", 1985, "MANOVA method for analyzing "
             "repeated measures designs: An extensive primer", "Psychological Bulletin", "97",
             "2", "316\u2013333", "10.1037/0033-2909.97.2.316"),
    _article("mauchly1940", "Mauchly, J. W.", 1940, "Significance test for sphericity of a normal "
             "n-variate distribution", "The Annals of Mathematical Statistics", "11", "2",
             "204\u2013209", "10.1214/aoms/1177731915"),
    _article("searle1980", "Searle, S. R., Speed, F. M., & Milliken, G. A.", 1980, "Population "
             "marginal means in the linear model: An alternative to least squares means",
             "The American Statistician", "34", "4", "216\u2013221", "10.1080/00031305.1980.10483031"),
    _article("langsrud2003", "Langsrud, \u00d8.", 2003, "ANOVA for unbalanced data: Use Type II "
             "instead of Type III sums of squares", "Statistics and Computing", "13", "2",
             "163\u2013167", "10.1023/A:1023260610025"),
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
    _article("satterthwaite1946", "Satterthwaite, F. E.", 1946, "An approximate distribution of "
             "estimates of variance components", "Biometrics Bulletin", "2", "6",
             "110\u2013114", "10.2307/3002019"),
    _article("shapiro1965", "Shapiro, S. S., & Wilk, M. B.", 1965, "An analysis of variance "
             "test for normality (complete samples)", "Biometrika", "52", "3\u20134",
             "591\u2013611", "10.1093/biomet/52.3-4.591"),
    _article("sidak1967", "\u0160id\u00e1k, Z.", 1967, "Rectangular confidence regions for the "
             "means of multivariate normal distributions", "Journal of the American "
             "Statistical Association", "62", "318", "626\u2013633",
             "10.1080/01621459.1967.10482935"),
    _article("steiger2004", "Steiger, J. H.", 2004, "Beyond the F test: Effect size confidence "
             "intervals and tests of close fit in the analysis of variance and contrast "
             "analysis", "Psychological Methods", "9", "2", "164\u2013182",
             "10.1037/1082-989X.9.2.164"),
    _book("tukey1953", "Tukey, J. W.", 1953, "The problem of multiple comparisons",
          "Unpublished manuscript, Princeton University; reprinted 1994 in The collected works "
          "of John W. Tukey, Vol. 8, Chapman & Hall"),
    _article("welch1947", "Welch, B. L.", 1947, "The generalization of \u2018Student's\u2019 "
             "problem when several different population variances are involved", "Biometrika",
             "34", "1\u20132", "28\u201335", "10.1093/biomet/34.1-2.28"),
    _article("welch1951", "Welch, B. L.", 1951, "On the comparison of several mean values: An "
             "alternative approach", "Biometrika", "38", "3\u20134", "330\u2013336",
             "10.1093/biomet/38.3-4.330"),
    _article("westfall2001", "Westfall, P. H., & Krishen, A.", 2001, "Optimally weighted, fixed "
             "sequence and gatekeeper multiple testing procedures", "Journal of Statistical "
             "Planning and Inference", "99", "1", "25\u201340", None),
    _article("zimmerman2004", "Zimmerman, D. W.", 2004, "A note on preliminary tests of "
             "equality of variances", "British Journal of Mathematical and Statistical "
             "Psychology", "57", "1", "173\u2013181", "10.1348/000711004849222"),
)})

_REPEATED_DESIGN = (
    "With a within-unit factor, the univariate repeated-measures (split-plot) analysis uses "
    "complete units only, as registered. Between units, the registered model is fitted to "
    "each unit's mean over the occasions (its sums of squares on the scale of single "
    "observations). Within units, each unit's observations are turned into orthonormal "
    "contrasts of the occasions; the within factor, and its listed interactions with "
    "between-unit terms, are tested against the residual within units, summed over those "
    "contrasts (the univariate tests of the multivariate linear model; O'Brien & Kaiser, "
    "1985); between-unit terms not listed with the within factor, blocks among them, are "
    "pooled into that residual.")
_REPEATED_CONTRASTS = ("Contrasts of the within factor are tested on each unit's own contrast "
                       "scores, which needs no sphericity.")

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
    Method("model-descriptives", "Descriptive statistics by cell",
           "Per cell of the crossed treatment factors (per cell and occasion with repeated "
           "measures): the number of units analysed and missing, the mean with its standard "
           "deviation (n \u2212 1 divisor), standard error and a confidence interval from "
           "Student's t on n \u2212 1 degrees of freedom, and the median, quartiles, minimum and "
           "maximum (Hyndman & Fan, 1996, definition 7), before any adjustment by the model.",
           ("hyndman1996",)),
    Method("linear-model", "Linear model fitted from cell statistics",
           "The registered model (treatment factors, blocks, the listed interactions and "
           "covariates) is fitted by least squares from the cells' sufficient statistics: the "
           "number of units, the means and the centred within-cell cross-products, computed "
           "in one stable pass over the rows, so that the fit itself costs no more with more "
           "rows. Each term's sum of squares is the increase in residual sum of squares when "
           "the term leaves the model: in the order listed for type 1; adjusted for every "
           "term that does not contain it for type 2; adjusted for all other terms, with "
           "sum-to-zero coding, for type 3 (Langsrud, 2003, on the choice). The F ratio of "
           "each term's mean square to the residual mean square is referred to the F "
           "distribution. Partial eta squared and partial omega squared (Olejnik & Algina, "
           "2003) have confidence intervals from inverting the noncentral F distribution "
           "(Steiger, 2004).",
           ("langsrud2003", "olejnik2003", "steiger2004")),
    Method("marginal-means", "Estimated marginal means and their contrasts",
           "Estimated marginal means are the model's predicted cell means averaged with equal "
           "weights over the levels of the other factors, covariates held at their overall "
           "mean (Searle, Speed & Milliken, 1980). Their standard errors and those of the "
           "planned contrasts among them come from the covariance matrix of the fitted "
           "coefficients; t on the residual degrees of freedom.",
           ("searle1980",)),
    Method("simple-effects", "Simple effects",
           "A simple effect compares a factor's levels within one level of another factor, "
           "on the same model's marginal means; a family of simple effects holds every level "
           "of that factor together, so its multiplicity control covers all of them.",
           ()),
    Method("slopes", "Homogeneity of regression slopes",
           "For each covariate the interaction of the covariate with the cells of the "
           "treatment factors is added to the model and tested with an F test; adjusted means "
           "assume a common slope.",
           ()),
    Method("repeated", "Repeated-measures analysis of variance",
           _REPEATED_DESIGN + " Sphericity is tested with Mauchly's (1940) test; within-unit "
           "tests are also given with the degrees of freedom multiplied by the "
           "Greenhouse\u2013Geisser (1959) and Huynh\u2013Feldt (1976, with Lecoutre's 1991 "
           "correction for groups) epsilons, and the conclusions use the "
           "Greenhouse\u2013Geisser corrected test. The confidence interval of a within-unit "
           "term's partial eta squared and partial omega squared inverts the noncentral F "
           "distribution on those corrected (generally fractional) degrees of freedom, the "
           "noncentrality limits \u03bb turned into \u03bb / (\u03bb + df\u2081 + df\u2082 + 1) "
           "with the same degrees of freedom (Steiger, 2004), so that it excludes zero exactly "
           "when the corrected test rejects. " + _REPEATED_CONTRASTS,
           ("mauchly1940", "greenhouse1959", "huynh1976", "lecoutre1991", "obrien1985",
            "steiger2004")),
    Method("repeated-two-levels", "Repeated-measures analysis of variance",
           _REPEATED_DESIGN + " The within factor has two levels, so there is a single "
           "contrast between them and sphericity holds trivially: no test of sphericity and "
           "no correction of the degrees of freedom is needed, and the within-unit tests and "
           "the noncentral-F intervals of their effect sizes (Steiger, 2004) use the "
           "uncorrected degrees of freedom. " + _REPEATED_CONTRASTS,
           ("obrien1985", "steiger2004")),
    Method("within-strata", "Several within-unit factors",
           "With more than one within-unit factor every unit is observed at each cell of their "
           "crossed levels, and the complete-units rule applies to that whole grid. Each within "
           "factor, and each listed interaction of within factors, is tested in its own error "
           "stratum, the units by that term: its contrasts are the orthonormal contrasts of its "
           "factors crossed with the means over the other within factors, its listed "
           "interactions with between-unit terms are tested in the same stratum, and Mauchly's "
           "test and the Greenhouse\u2013Geisser and Huynh\u2013Feldt epsilons are computed for "
           "each stratum from its own contrasts (a term of one degree of freedom has epsilon 1). "
           "An interaction of within factors that the plan does not list is not tested, and its "
           "contrasts enter no error term. Contrasts of one within factor are taken on each "
           "unit's mean over the other within factors.",
           ("obrien1985", "mauchly1940", "greenhouse1959")),
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
           "For each tested term: partial eta squared (the term's sum of squares over itself "
           "plus the error sum of squares; with one factor, eta squared, the share of the total "
           "sum of squares between groups), partial omega squared (a less biased estimate of "
           "the population share; Hays, 1963; Olejnik & Algina, 2003) and Cohen's f = "
           "\u221a(\u03b7\u00b2 / (1 \u2212 \u03b7\u00b2)) (Cohen, 1988). Confidence intervals invert the noncentral F "
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
    Method("shapiro-model", "Shapiro\u2013Wilk test of normality",
           "The Shapiro\u2013Wilk W test (Shapiro & Wilk, 1965) is applied to the residuals of "
           "the fitted model (each value minus its fitted value), with coefficients and p value "
           "from Royston's (1995) algorithm. The normal Q-Q plot uses Blom's (1958) plotting "
           "positions.",
           ("shapiro1965", "royston1995", "blom1958")),
    Method("shapiro-strata", "Shapiro\u2013Wilk test of normality in each stratum",
           "The Shapiro\u2013Wilk W test (Shapiro & Wilk, 1965; Royston's 1995 algorithm) is "
           "applied to the residuals of each stratum whose tests rely on them: between units, "
           "the residuals of the between-units model fitted to each unit's mean; within units, "
           "each observation minus its unit's mean and the fitted within-unit effects (the "
           "residuals of the within-units error term). The normal Q-Q plot shows the residuals "
           "of the unit means, with Blom's (1958) plotting positions.",
           ("shapiro1965", "royston1995", "blom1958")),
    Method("brown-forsythe", "Brown\u2013Forsythe test of equal variances",
           "The Brown\u2013Forsythe test (Brown & Forsythe, 1974) is the one-way analysis of "
           "variance of the absolute deviations of each value from its group median (in a design "
           "beyond one factor, of each residual of the fitted model from its cell's median, so "
           "that blocks and covariates do not pass for unequal spread); it is robust to "
           "non-normal data.",
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
    Method("custom", "Custom contrast weights",
           "Custom weights are rescaled so that the positive weights sum to 1 and the "
           "negative ones to \u22121, so that the estimate is a difference between two "
           "weighted means of levels in the outcome's unit (weights \u22123, 1, 1, 1 estimate "
           "the mean of the last three levels minus the first). The hypothesis is the same "
           "at any scale.",
           ()),
    Method("contrasts-classical", "Planned contrasts, pooled variance",
           "Each planned contrast tests H0: \u03a3 w\u1d62\u03bc\u1d62 = 0 for its weights w "
           "over the groups. The estimate is \u03a3 w\u1d62\u0233\u1d62, its standard error "
           "\u221a(MS_within \u03a3 w\u1d62\u00b2/n\u1d62), and t = estimate / SE is referred "
           "to Student's t on the N \u2212 k degrees of freedom of the within-group mean square "
           "(Kirk, 2013). Pairs are written later level minus earlier level.",
           ("kirk2013",)),
    Method("contrasts-welch", "Planned contrasts, unequal variances (Welch\u2013Satterthwaite)",
           "Without assuming equal variances, the standard error of a contrast is "
           "\u221a(\u03a3 w\u1d62\u00b2s\u1d62\u00b2/n\u1d62) and t is referred to Student's "
           "t on the Welch\u2013Satterthwaite degrees of freedom (Welch, 1947; Satterthwaite, "
           "1946), generally fractional.",
           ("welch1947", "satterthwaite1946")),
    Method("contrasts-rank", "Rank-based contrasts (Dunn)",
           "Contrasts of the groups' mean ranks over all units, with the standard error of "
           "Dunn (1964) corrected for ties; z = estimate / SE is referred to the standard normal "
           "distribution. Estimates are differences in mean ranks, not in the outcome's unit.",
           ("dunn1964",)),
    Method("trend", "Orthogonal polynomial trend contrasts",
           "Trend contrasts for an ordered factor use orthogonal polynomial weights for the "
           "registered spacing of the levels (linear, quadratic, ...), obtained by "
           "orthogonalising the powers of the spacing; with equal spacing they are the "
           "tabulated coefficients (Fisher & Yates, 1938; Kirk, 2013). Each is scaled so that "
           "its estimate reads directly: the linear one is the least-squares slope of the "
           "level means (marginal means in a model, mean ranks in a rank-based analysis) per "
           "unit of the spacing (per step between adjacent levels when no "
           "spacing is registered), its weights the centred scores divided by their sum of "
           "squares (Maxwell & Delaney, 2004); the degree-d one is the coefficient of x^d in the least-squares polynomial of degree d fitted "
           "to the level means, in the outcome's unit per spacing unit to the power d. The "
           "scale changes the estimate and its interval, not t or p.",
           ("fisher1938", "kirk2013", "maxwell2004")),
    Method("helmert", "Helmert contrasts",
           "Each level in plan order is compared with the mean of the levels after it "
           "(weights 1 and \u22121/(k \u2212 i)); the k \u2212 1 contrasts are mutually "
           "orthogonal for equal group sizes (Kirk, 2013).",
           ("kirk2013",)),
    Method("tukey", "Tukey\u2013Kramer simultaneous pairwise comparisons",
           "All pairwise differences are referred to the studentized range distribution "
           "(Tukey, 1953), with the standard error of each pair from its own group sizes "
           "(Kramer, 1956). Adjusted p values and confidence intervals hold simultaneously for "
           "the whole family of pairs.",
           ("tukey1953", "kramer1956")),
    Method("games-howell", "Games\u2013Howell pairwise comparisons",
           "Under unequal variances each pair's difference uses its own standard error and "
           "Welch\u2013Satterthwaite degrees of freedom, referred to the studentized range "
           "distribution (Games & Howell, 1976). Its intervals hold jointly only approximately.",
           ("games1976", "welch1947")),
    Method("nemenyi", "Nemenyi's pairwise comparisons of mean ranks",
           "All pairwise differences of the groups' mean ranks, each with Dunn's (1964) "
           "tie-corrected standard error, are referred to the studentized range distribution "
           "with infinite degrees of freedom, the large-sample all-pairs test on joint ranks "
           "of Nemenyi (1963). Adjusted p values and intervals hold simultaneously for the "
           "family of pairs in large samples.",
           ("nemenyi1963", "dunn1964")),
    Method("dunnett", "Dunnett's many-to-one comparisons",
           "Each level is compared with the control by a single-step test on the multivariate "
           "t distribution of the comparisons, whose correlations follow from the group sizes "
           "(Dunnett, 1955); adjusted p values and intervals hold simultaneously.",
           ("dunnett1955",)),
    Method("tukey-joint", "Tukey's all-pairs comparisons on the joint t distribution",
           "The family's pairwise differences are tested together, single-step, on the "
           "multivariate t "
           "distribution of their t statistics, with the correlation matrix of the model's "
           "estimates (Hothorn, Bretz & Westfall, 2008); with equal group sizes and no covariate "
           "this is Tukey's (1953) studentized-range test. The probabilities are integrated "
           "numerically by randomized quasi-Monte Carlo (Genz & Bretz, 2002), with the bound on "
           "the integration error given in the table note. Adjusted p values and intervals hold "
           "simultaneously for the whole family.",
           ("tukey1953", "hothorn2008", "genz2002")),
    Method("dunnett-joint", "Dunnett's many-to-one comparisons on the joint t distribution",
           "The family's comparisons with the control are tested together, single-step, on the "
           "multivariate t "
           "distribution of their t statistics, with the correlation matrix of the model's "
           "estimates (Dunnett, 1955; Hothorn, Bretz & Westfall, 2008), integrated numerically "
           "by randomized quasi-Monte Carlo (Genz & Bretz, 2002) with the bound on the "
           "integration error given in the table note. Adjusted p values and intervals hold "
           "simultaneously for the whole family.",
           ("dunnett1955", "hothorn2008", "genz2002")),
    Method("dunnett-welch", "Dunnett's many-to-one comparisons under unequal variances",
           "Each level is compared with the control with its own standard error and "
           "Welch\u2013Satterthwaite degrees of freedom; the single-step test refers the "
           "comparisons to Dunnett's (1955) multivariate t with the correlations implied by "
           "the estimated variances of the level means (Hasler & Hothorn, 2008). Its "
           "intervals hold jointly only approximately.",
           ("dunnett1955", "hasler2008", "welch1947")),
    Method("dunnett-rank", "Many-to-one comparisons of mean ranks",
           "Each level's mean rank is compared with the control's by Dunn's (1964) "
           "tie-corrected z, and the comparisons are referred jointly to Dunnett's (1955) "
           "multivariate normal distribution with the correlations that follow from the group "
           "sizes. Adjusted p values and intervals hold simultaneously in large samples.",
           ("dunn1964", "dunnett1955")),
    Method("bonferroni", "Bonferroni adjustment",
           "Each p value is multiplied by the number m of hypotheses in the family (capped at 1) "
           "and each interval is set at level 1 \u2212 \u03b1/m, which holds the family-wise "
           "error rate at \u03b1 under any dependence (Dunn, 1961).",
           ("dunn1961",)),
    Method("sidak", "\u0160id\u00e1k adjustment",
           "Adjusted p = 1 \u2212 (1 \u2212 p)^m and intervals at level (1 \u2212 \u03b1)^(1/m) "
           "(\u0160id\u00e1k, 1967), exact for independent tests and slightly less "
           "conservative than Bonferroni.",
           ("sidak1967",)),
    Method("holm", "Holm's step-down adjustment",
           "The ordered p values are compared with \u03b1/m, \u03b1/(m \u2212 1), ... and "
           "testing stops at the first non-rejection (Holm, 1979); it controls the family-wise "
           "error rate under any dependence. Intervals are unadjusted.",
           ("holm1979",)),
    Method("hochberg", "Hochberg's step-up adjustment",
           "The ordered p values are compared with the same thresholds as Holm's, from the "
           "largest down (Hochberg, 1988); it controls the family-wise error rate for "
           "independent or positively dependent tests. Intervals are unadjusted.",
           ("hochberg1988",)),
    Method("benjamini-hochberg", "Benjamini\u2013Hochberg false discovery rate",
           "Step-up adjusted p values that control the expected share of false rejections "
           "among the rejections, the false discovery rate (Benjamini & Hochberg, 1995), not the "
           "family-wise error rate. Intervals are unadjusted.",
           ("benjamini1995",)),
    Method("fixed-sequence", "Fixed-sequence testing",
           "The hypotheses are tested at the full \u03b1 in the registered order; testing "
           "stops at the first hypothesis not rejected, and the later ones are not tested. This "
           "controls the family-wise error rate without splitting \u03b1 (Maurer et al., 1995; "
           "Westfall & Krishen, 2001). The adjusted p of a hypothesis is the largest raw p up "
           "to it; intervals are unadjusted.",
           ("maurer1995", "westfall2001")),
    Method("graphical", "Graphical multiple testing",
           "The registered hypotheses were tested by the graphical sequentially rejective "
           "procedure of Bretz et al. (2009): each starts at its registered "
           "share of \u03b1, and when one is rejected its share is passed on to the others along "
           "the registered transition weights, the graph being updated as the paper prescribes. "
           "It is the shortcut of a closed test of weighted Bonferroni tests and controls the "
           "family-wise error rate under any dependence. Adjusted p values are those of Bretz "
           "et al. (2011); intervals are unadjusted.",
           ("bretz2009", "bretz2011")),
    Method("serial-gatekeeping", "Serial gatekeeping",
           "The registered families are tested in the registered sequence: the first at the full "
           "\u03b1, each later one at the full \u03b1 only when every hypothesis of the family "
           "before it was rejected, otherwise none of its hypotheses is tested (the gate is "
           "closed). This keeps the family-wise error rate over all the families of the "
           "sequence at \u03b1 (Maurer et al., 1995; Westfall & Krishen, 2001; Dmitrienko & "
           "Tamhane, 2007). The adjusted p of a hypothesis behind an open gate is the larger of "
           "its adjusted p within its family and the largest adjusted p of the families before "
           "it.",
           ("maurer1995", "westfall2001", "dmitrienko2007")),
    Method("unadjusted", "No multiplicity adjustment",
           "Families marked with no adjustment report raw p values and unadjusted intervals; "
           "with several hypotheses the chance of at least one false rejection exceeds "
           "\u03b1 (ICH E9, 1998, section 5.6).",
           ("ich1998",)),
    Method("hedges", "Standardized contrasts (Hedges' g)",
           "The standardized effect of a contrast is its estimate divided by the pooled "
           "within-group SD, times Hedges' (1981) small-sample correction "
           "J = 1 \u2212 3/(4 df \u2212 1) on the within-group degrees of freedom.",
           ("hedges1981",)),
    Method("one-sided", "One-sided hypotheses",
           "A one-sided hypothesis is tested at the registered \u03b1 as its one-sided level, "
           "with an interval open on the side the alternative does not bound. The regulatory "
           "convention is half the two-sided \u03b1 (ICH E9, 1998, section 5.5).",
           ("ich1998",)),
    Method("contingency", "Pre-specified fallback rules",
           "The plan pre-specifies fallback rules: a named test of an assumption whose p below "
           "the threshold selects another analysis, evaluated in plan order, the first that "
           "applies being used. Such two-stage rules distort the error rates of the final test "
           "(Zimmerman, 2004; Rochon et al., 2012); the appendix therefore shows every rule, "
           "whether it was applied, and, when one was, the analyses both with and without it.",
           ("zimmerman2004", "rochon2012")),
    Method("pretest", "Diagnostics are shown, not used to choose the test",
           "Choosing a test by the outcome of a preliminary test of an assumption distorts "
           "the error rates (Zimmerman, 2004; Rochon et al., 2012). The diagnostics in this "
           "appendix are therefore reported beside the registered analysis, which they do "
           "not change.",
           ("zimmerman2004", "rochon2012")),
    Method("exact-decimal", "Exact sums of squares on decimal data",
           "Outcome values written as decimal text were read as scaled integers, and the "
           "group counts, sums and sums of squared deviations were accumulated exactly in "
           "integer arithmetic; conversion to floating point happens only for the final "
           "quantities. With this path every certified value of the NIST StRD analysis-of-"
           "variance datasets is reproduced to at least 12 significant digits, the log "
           "relative error measure of McCullough (1998).",
           ("mccullough1998",)),
    Method("float64", "Two-pass sums of squares",
           "Outcome values held as binary floating point (or decimal text too long for exact "
           "integers) were summarised per group by the two-pass algorithm: group means "
           "first, then the squared deviations from them, which avoids the cancellation of "
           "the one-pass textbook formula (Chan, Golub & LeVeque, 1983).",
           ("chan1983",)),
    Method("subsample", "Large sources aggregated out of core",
           "The data source was too large to load and was aggregated by an embedded "
           "database engine. Group counts, means and sums of squared deviations use every "
           "analysed unit, so the variance table, Welch's test, Bartlett's test, the effect "
           "sizes and the planned contrasts on means are exact for the full data; figures "
           "and row-level diagnostics (quartiles, Shapiro–Wilk, Kruskal–Wallis, "
           "Brown–Forsythe, the outlier screen and rank-based contrasts) use a deterministic "
           "subsample whose size each outcome states.",
           ()),
    Method("reporting", "Reporting",
           "Statistics are reported in APA style (American Psychological Association, 2020): "
           "test statistic with its degrees of freedom, exact p to three decimals (\u201c< "
           ".001\u201d below that), and estimates with their confidence intervals in brackets.",
           ("apa2020",)),
)})


def _ran(outcomes: list[OutcomeResult], test) -> bool:
    return any(test(o) for o in outcomes)


def all_families(results: StudyResults) -> list[ContrastFamily]:
    """Every contrast family of the run: each outcome's, then each exploratory analysis's."""
    return ([f for o in results.outcomes for f in o.contrasts]
            + [f for e in results.exploratory for f in e.families])


_CONTRAST_METHODS = MappingProxyType({
    "classical": "contrasts-classical", "welch": "contrasts-welch", "rank-based": "contrasts-rank"})


@dataclass(frozen=True)
class Adjustment:
    """The published name of a family's multiplicity control as it was computed.

    `key` is the `METHODS` entry that describes it; `name` is the name as typeset
    ("Games–Howell"), `note` the phrase of a table note ("Games–Howell
    single-step"); `approximate` is True when its simultaneous intervals hold only
    approximately (each comparison keeps its own Welch df).
    """

    key: str
    name: str
    note: str
    approximate: bool = False


#: Every multiplicity control by its `METHODS` key: the one place that names them.
ADJUSTMENTS: Mapping[str, Adjustment] = MappingProxyType({a.key: a for a in (
    Adjustment("tukey", "Tukey\u2013Kramer", "Tukey\u2013Kramer single-step"),
    Adjustment("games-howell", "Games\u2013Howell", "Games\u2013Howell single-step", True),
    Adjustment("nemenyi", "Nemenyi", "Nemenyi's single-step range test on mean ranks"),
    Adjustment("dunnett", "Dunnett", "Dunnett's many-to-one single-step"),
    Adjustment("dunnett-welch", "Dunnett with unequal variances",
               "Dunnett's many-to-one single-step with each level's own variance", True),
    Adjustment("dunnett-rank", "Dunnett on mean ranks",
               "Dunnett's many-to-one single-step on Dunn's rank z"),
    Adjustment("tukey-joint", "Tukey on the joint t",
               "Tukey's all-pairs single-step on the joint t distribution"),
    Adjustment("dunnett-joint", "Dunnett on the joint t",
               "Dunnett's many-to-one single-step on the joint t distribution"),
    Adjustment("bonferroni", "Bonferroni", "Bonferroni"),
    Adjustment("sidak", "\u0160id\u00e1k", "\u0160id\u00e1k"),
    Adjustment("holm", "Holm", "Holm's step-down"),
    Adjustment("hochberg", "Hochberg", "Hochberg's step-up"),
    Adjustment("benjamini-hochberg", "Benjamini\u2013Hochberg",
               "Benjamini\u2013Hochberg, controlling the false discovery rate (not the "
               "family-wise error rate)"),
    Adjustment("fixed-sequence", "fixed-sequence", "fixed-sequence testing in the registered order"),
    Adjustment("graphical", "graphical procedure",
               "the graphical procedure of Bretz et al. (2009) with the registered weights and "
               "transitions"),
    Adjustment("unadjusted", "unadjusted", "no adjustment"),
)})

# The single-step procedures change with the hypotheses' method: Tukey's range with each
# pair's Welch df is Games & Howell's (1976), on Dunn's rank z with infinite df Nemenyi's
# (1963); Dunnett's with each level's own variance or on mean ranks is a different test
# from Dunnett's (1955) with the pooled variance.
_UNDER_METHOD = MappingProxyType({
    ("tukey", "welch"): "games-howell", ("tukey", "rank-based"): "nemenyi",
    ("dunnett", "welch"): "dunnett-welch", ("dunnett", "rank-based"): "dunnett-rank",
    # on marginal means of a model both are computed on the joint t of the estimates
    ("tukey", "marginal-means"): "tukey-joint", ("dunnett", "marginal-means"): "dunnett-joint"})


def adjustment(multiplicity: str, method: str) -> Adjustment:
    """The multiplicity control actually computed for a family registered under
    `multiplicity` whose hypotheses were estimated by `method` (classical, welch,
    rank-based or marginal-means).

    >>> adjustment("tukey", "welch").name
    'Games–Howell'
    """
    key = _UNDER_METHOD.get((multiplicity, method),
                            "unadjusted" if multiplicity == "none" else multiplicity)
    return ADJUSTMENTS[key]


def multiplicity_method(family: ContrastFamily) -> str:
    """The `METHODS` key of a family's multiplicity control (Tukey under Welch: Games–Howell)."""
    return adjustment(family.multiplicity, family.method).key


#: What each method's intervals are, and why, for the table note: (kind, sentence).
_BESIDE = "from the reference distribution and degrees of freedom of the test beside it"
_INTERVALS = MappingProxyType({
    "bonferroni": ("simultaneous", "Each interval is at level 1 \u2212 \u03b1/m with m = {m}, the "
                   f"hypotheses of the whole family, {_BESIDE}; together they hold simultaneously "
                   "(Bonferroni's inequality)."),
    "sidak": ("simultaneous", "Each interval is at level (1 \u2212 \u03b1)^(1/m) with m = {m}, the "
              f"hypotheses of the whole family, {_BESIDE}; together they hold simultaneously "
              "(\u0160id\u00e1k's inequality)."),
    "tukey": ("simultaneous", "The intervals use the critical value of the same joint law as the "
              "adjusted p values, with the degrees of freedom of the tests beside them, and hold "
              "simultaneously for the family's {m} hypotheses."),
    "holm": ("unadjusted", "Holm's step-down procedure has no simultaneous confidence intervals "
             "that agree with its decisions in general, so each interval is the unadjusted one at "
             f"level 1 \u2212 \u03b1, {_BESIDE}."),
    "hochberg": ("unadjusted", "Hochberg's step-up procedure has no simultaneous confidence "
                 "intervals that agree with its decisions, so each interval is the unadjusted one "
                 f"at level 1 \u2212 \u03b1, {_BESIDE}."),
    "benjamini-hochberg": ("unadjusted", "Control of the false discovery rate has no simultaneous "
                           "confidence intervals, so each interval is the unadjusted one at level "
                           f"1 \u2212 \u03b1, {_BESIDE}."),
    "fixed-sequence": ("unadjusted", "No simultaneous intervals compatible with fixed-sequence "
                       "testing are computed, so each interval is the unadjusted one at level "
                       f"1 \u2212 \u03b1, {_BESIDE}."),
    "graphical": ("unadjusted", "No simultaneous intervals compatible with the graphical procedure "
                  "are computed, so each interval is the unadjusted one at level 1 \u2212 \u03b1, "
                  f"{_BESIDE}."),
    "none": ("unadjusted", "No multiplicity adjustment: each interval is the unadjusted one at "
             f"level 1 \u2212 \u03b1, {_BESIDE}."),
})


def interval_note(method: str, m: int, tested: bool = True) -> tuple[str, str]:
    """What the intervals of a registered family of `m` hypotheses under `method` are
    (``simultaneous``, ``unadjusted`` or ``not-tested``) and the table note's sentence
    saying why.

    >>> interval_note("bonferroni", 4)[0]
    'simultaneous'
    """
    if not tested:
        return "not-tested", ("The family was not tested (its gate was closed), so each interval "
                              f"is the unadjusted one at level 1 \u2212 \u03b1, {_BESIDE}, shown "
                              "for information.")
    kind, sentence = _INTERVALS["tukey" if method == "dunnett" else method]
    return kind, sentence.format(m=m)


def _contrast_methods(results: StudyResults) -> list[str]:
    families = [f for f in all_families(results) if f.hypotheses]
    hypotheses = [h for f in families for h in f.hypotheses]
    used = {_CONTRAST_METHODS.get(f.method) for f in families}
    used |= {h.kind for h in hypotheses} | {multiplicity_method(f) for f in families}
    if any(h.standardized is not None for h in hypotheses):
        used.add("hedges")
    if any(h.alternative != "two-sided" for h in hypotheses):
        used.add("one-sided")
    return [key for key in _CONTRAST_ORDER if key in used]


_CONTRAST_ORDER = (
    "contrasts-classical", "contrasts-welch", "contrasts-rank", "custom", "trend", "helmert", "tukey",
    "games-howell", "nemenyi", "dunnett", "dunnett-welch", "dunnett-rank", "tukey-joint",
    "dunnett-joint", "bonferroni", "sidak", "holm", "hochberg", "benjamini-hochberg",
    "fixed-sequence", "graphical", "unadjusted", "hedges", "one-sided")


def methods_used(results: StudyResults) -> tuple[Method, ...]:
    """The methods that `results` show were run, in appendix order: each block is chosen
    by what some outcome's results hold, whatever its design."""
    outcomes = list(results.outcomes)
    one_factor = [o for o in outcomes if o.robust]
    beyond = [o for o in outcomes if not o.robust]
    diagnostics = [o.diagnostics for o in outcomes]
    variance_methods = {t.method for d in diagnostics for t in d.equal_variance}
    chosen = ["exclusions"] if results.unit_flow.exclusions else []
    chosen += ["descriptives"] if one_factor else []
    chosen += ["model-descriptives"] if beyond else []
    chosen += ["anova"] if one_factor else []
    chosen += ["linear-model"] if _ran(beyond, lambda o: o.marginal_means or not _strata(o)) else []
    chosen += ["marginal-means"] if _ran(beyond, lambda o: o.marginal_means) else []
    chosen += ["simple-effects"] if any(h.within for f in all_families(results)
                                        for h in f.hypotheses) else []
    chosen += ["slopes"] if _ran(outcomes, lambda o: any(c.by for c in o.slopes)) else []
    chosen += ["covariates-per-outcome"] if len(_covariate_sets(outcomes)) > 1 else []
    if _ran(outcomes, _strata):
        # a lower bound 1/d of 1 in every stratum: single contrasts, no correction anywhere
        two_levels = all(t.sphericity.lower_bound >= 1 for o in outcomes for t in _strata(o))
        chosen.append("repeated-two-levels" if two_levels else "repeated")
        chosen += ["within-strata"] if _ran(outcomes, lambda o: len(_strata(o)) > 1) else []
    chosen += ["welch"] if _ran(one_factor, lambda o: o.robust.welch.statistic is not None) else []
    chosen += ["kruskal"] if _ran(one_factor, lambda o: o.robust.kruskal.statistic is not None) else []
    chosen += ["effect_sizes"] if _ran(outcomes, lambda o: any(
        r.partial_eta_squared is not None for t in o.tables for r in t.rows)) else []
    chosen += ["shapiro"] if _ran(one_factor, lambda o: o.diagnostics.normality) else []
    if _ran(beyond, lambda o: o.diagnostics.normality):
        strata = _ran(beyond, lambda o: o.diagnostics.within_normality)
        chosen.append("shapiro-strata" if strata else "shapiro-model")
    chosen += [m for m in ("brown-forsythe", "bartlett") if m in variance_methods]
    chosen += ["outliers"] if any(d.outliers for d in diagnostics) else []
    arithmetic = {o.arithmetic for o in outcomes}
    chosen += [m for m in ("exact-decimal", "float64") if m in arithmetic]
    chosen += ["subsample"] if _ran(outcomes, lambda o: o.sample_of) else []
    chosen += _contrast_methods(results)
    declared = [f for f in results.families if f.scope == "declared"]
    extra = [_families_method(declared)] if declared else []
    if any(f.gate for f in declared):
        extra.append(METHODS["serial-gatekeeping"])
    # with a registered fallback the diagnostics can choose the analysis: say so instead
    chosen += ["contingency"] if _ran(outcomes, lambda o: o.contingencies) else ["pretest"]
    chosen += ["reporting"]
    defaults = {s.key for s in results.plan_settings if not s.stated}
    made = {"covariates-per-outcome": lambda: _per_outcome_covariates(outcomes),
            "exclusions": lambda: _exclusions_method(results)}
    listed = [_as_stated(METHODS[key], defaults) if key in METHODS else made[key]()
              for key in chosen]
    # the families after the contrast methods, before the contingency (or pretest) and reporting
    return tuple(listed[:-2] + extra + listed[-2:])


def _strata(outcome: OutcomeResult) -> list[ModelTable]:
    """The within strata's tables of an outcome (none without a within factor)."""
    return [t for t in outcome.tables if t.sphericity]


def _covariate_sets(outcomes: list[OutcomeResult]) -> set[tuple[str, ...]]:
    return {tuple(c.label for c in o.covariate_slopes) for o in outcomes}


def _per_outcome_covariates(outcomes: list[OutcomeResult]) -> Method:
    """Which covariates adjust which outcome, when they differ between outcomes."""
    def adjusted(o: OutcomeResult) -> str:
        labels = [c.label for c in o.covariate_slopes]
        if not labels:
            return f"{o.label} is adjusted for no covariate"
        listed = ", ".join(labels[:-1]) + (" and " if len(labels) > 1 else "") + labels[-1]
        return f"{o.label} is adjusted for {listed}"

    return Method("covariates-per-outcome", "Covariates by outcome",
                  "Each outcome is adjusted only for the covariates the plan registers for it: "
                  + "; ".join(adjusted(o) for o in outcomes) + ".", ())


def _exclusions_method(results: StudyResults) -> Method:
    """The registered exclusion rules with their data conditions, for reviewers: the rest of
    the appendix names a rule by its reason."""
    rules = [f"rule {x.rule} ({x.reason}) sets aside every unit with a row whose {x.column} "
             f"cell reads “{x.equals}”, {x.total} unit{'s' if x.total != 1 else ''} here"
             for x in results.unit_flow.exclusions]
    return Method("exclusions", "Registered exclusion rules",
                  "Units are set aside only by the exclusion rules the plan registers, applied in "
                  "plan order before any analysis, each unit under the first rule it meets: "
                  + "; ".join(rules) + ". A cell meets a rule when it equals the rule's value "
                  "once spaces at either end are trimmed: numbers by value, true and false in "
                  "any case, other text exactly.", ())


def _families_method(declared: list[RegisteredFamily]) -> Method:
    """The registered families of a plan that declares them, each with its method, members
    and place in the gatekeeping sequence, in one paragraph."""
    parts = []
    for f in declared:
        outcomes = list(dict.fromkeys(m.outcome for m in f.members))
        name = ADJUSTMENTS[_FAMILY_KEYS.get(f.method, f.method)].name
        where = ", ".join(outcomes[:-1]) + (" and " if len(outcomes) > 1 else "") + outcomes[-1]
        text = (f"family {f.id}{' (' + f.label + ')' if f.label else ''}: "
                f"{f.hypotheses} hypothes{'is' if f.hypotheses == 1 else 'es'} on {where}, "
                f"{name}")
        if f.gate:
            text += f", tested only after every hypothesis of family {f.gate.after} is rejected"
        parts.append(text)
    chained = {f.id for f in declared if f.gate} | {f.gate.after for f in declared if f.gate}
    alone = [f.id for f in declared if f.id not in chained]
    apart = ("" if len(declared) < 2 or not alone else
             f" {'Family ' + alone[0] + ' is' if len(alone) == 1 else 'Families ' + ', '.join(alone) + ' are'}"
             " tested apart from the others, so the family-wise error rate is controlled within "
             "each family, not across them.")
    return Method("families", "Registered families of hypotheses",
                  "The plan registers its hypotheses in families, each tested by its own method "
                  "over all its members (across outcomes where it spans several) at the full "
                  "\u03b1: "
                  + "; ".join(parts) + ". Each conclusion names its family." + apart, ())


#: The multiplicity key of a family as the family-level name of its method (the analysis
#: may change the single-step test computed; each table names the one it computed).
_FAMILY_KEYS = MappingProxyType({"none": "unadjusted"})


def _as_stated(method: Method, defaults) -> Method:
    """The method's text with "as registered" only for rules the study file states: the
    complete-units rule of a repeated-measures analysis holds by default otherwise."""
    if method.key in ("repeated", "repeated-two-levels") and "repeated.missing" in defaults:
        return dataclasses.replace(method, text=method.text.replace(
            "complete units only, as registered", "complete units only, by default (the plan "
            "states no rule for missing occasions)"))
    return method


def _alphabetical(text: str) -> str:
    # APA files "Šidák" under S: compare letters without their diacritics
    return "".join(c for c in unicodedata.normalize("NFKD", text)
                   if not unicodedata.combining(c))


def references_for(methods: tuple[Method, ...]) -> tuple[Reference, ...]:
    """The references cited by `methods`, alphabetical as APA orders a reference list."""
    keys = {key for method in methods for key in method.references}
    return tuple(sorted((REFERENCES[k] for k in keys),
                        key=lambda r: (_alphabetical(r.authors), r.year)))
