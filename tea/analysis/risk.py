"""The odds: a Monte Carlo simulation of one case.

Each input named in the case's ``[risk.inputs]`` is drawn from its declared
distribution (uniform, triangular, normal or lognormal, truncated to its
bounds and to the key's physical range), optionally with rank correlations
between inputs; establishment failure is drawn per draw as well. All draws
are evaluated at once on the vectorised (draws x years) model
(:func:`tea.model.evaluate.evaluate`), and the run reports percentiles of NPV, IRR
and the equivalent annual value, the chance of a negative NPV, the chance
that the lowest DSCR falls below the lender's covenant, and the
year-by-year band of the cumulative cash flow.

Method
------
* Truncated distributions are sampled by rejection: draws outside the bounds
  are drawn again (exact for any bounds; the parser refuses bounds that keep
  less than 0.1 % of the probability).
* Rank correlation: the draws of each correlated input are re-ordered to the
  ranks of correlated normal scores (R. L. Iman and W. J. Conover, "A
  distribution-free approach to inducing rank correlation among input
  variables", *Communications in Statistics - Simulation and Computation*
  11(3), 311-334, 1982, doi:10.1080/03610918208812265). Each input keeps its
  marginal distribution exactly; the scores' Pearson correlation is
  2 sin(pi rho_s / 6) for a wanted Spearman rho_s.
* Establishment failure: with the case's ``establishment.failure_probability``
  (or its drawn value) a draw fails; it then pays the replanting
  (replant share x (planting material + planting operation)) in full in
  year 1 and its yield ramp-up starts one year later (year 1 yields nothing,
  year 2 what year 1 would have), where the deterministic ledger carries the
  expected value of both (the model's own lines, with the probability set to
  1 or 0 in a draw). A draw that does not fail pays no replanting.
* Whole-number inputs (stand life, years) are drawn and rounded to the
  nearest whole number.
* The standard error of a mean is sd / sqrt(draws), given from two defined
  draws on (the sample sd divides by draws - 1); of a probability p,
  sqrt(p (1 - p) / draws), given where some draws fall each way (at p = 0 or 1
  it is 0 whatever the draws, and would claim a certainty the draws do not
  give). Where none or all of the draws fall on the side counted, the exact
  one-sided 95 % bound is given instead: 1 - 0.05^(1/n) above 0, 0.05^(1/n)
  below 1 (C. J. Clopper and E. S. Pearson, "The use of confidence or fiducial
  limits illustrated in the case of the binomial", *Biometrika* 26(4),
  404-413, 1934; about 3/n, the "rule of three").
* Fewer than :data:`STABLE_DRAWS` draws are warned of (``RiskResult.warnings``).

These are planning estimates, not financial advice.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np

from tea.inputs import riskspec
from tea.analysis import screen, sensitivity
from tea.model.evaluate import evaluate
from tea.inputs.case import Case
from tea.core.errors import CaseError, Problem
from tea.core.texts import CAUTIONS
from tea.inputs.case import case_header as json_header

PERCENTILES = (5, 10, 50, 90, 95)
#: figures drawn per draw
FIGURES = ("npv", "npv_vs_current_use", "eav", "eav_vs_current_use", "irr", "min_dscr", "llcr",
           "llcr_no_cover_at_first_test", "loan_principal",
           "dscr_covenant", "establishment_cost")
#: bins of the NPV histogram
HISTOGRAM_BINS = 20
#: rows evaluated per chunk (and per progress-bar step)
CHUNK_ROWS = 8192
#: fewest draws whose percentiles and odds are stable enough to read. P5 and P95 rest on the 5 % of the draws
#: beyond each: the share of draws below a reported P5 has the binomial standard error sqrt(0.05 x 0.95 / n),
#: 0.7 percentage points at 1,000 draws (the P5 found lies between about the 3.6th and 6.4th percentiles, two
#: standard errors) but 2.2 at 100 draws (between the 0.6th and the 9.4th); a chance of a loss of a few
#: percent is as uncertain. Below this the run still reports, with a warning.
STABLE_DRAWS = 1000
#: confidence of the one-sided bound given where no draw (or every draw) falls on the side counted
BOUND_CONFIDENCE = 0.95


@dataclass
class Inputs:
    """Sampled inputs: each input's draws (canonical units) and the failure flags."""

    draws: dict[str, np.ndarray]
    failed: np.ndarray | None  # bool (n,), None when establishment failure is not drawn
    failure_probability: np.ndarray | None


def sample_marginal(inp: riskspec.InputKey, dist: Mapping[str, Any], n: int, rng: np.random.Generator) -> np.ndarray:
    """``n`` draws of one input from its distribution, within its effective bounds."""
    lo, hi = riskspec.effective_bounds(inp, dist)
    _, _, lo_open, hi_open = inp.bounds
    kind = dist["dist"]

    def draw(k: int) -> np.ndarray:
        if kind == "uniform":
            return rng.uniform(dist["low"], dist["high"], k)
        if kind == "triangular":
            return rng.triangular(dist["low"], dist["mode"], dist["high"], k)
        if kind == "normal":
            return rng.normal(dist["mean"], dist["sd"], k)
        mu, sigma = riskspec.lognormal_parameters(dist["mean"], dist["sd"])
        return rng.lognormal(mu, sigma, k)

    def outside(x: np.ndarray) -> np.ndarray:
        bad = (x < lo) | (x > hi)
        if lo_open:
            bad |= x == lo
        if hi_open:
            bad |= x == hi
        return bad

    x = draw(n)
    bad = np.flatnonzero(outside(x))
    rounds = 0
    while bad.size:
        rounds += 1
        if rounds > 10_000:  # cannot happen with >= 0.1 % of the mass inside; a guard, not a limit
            raise RuntimeError(f"{inp.path}: sampling between {lo:g} and {hi:g} does not converge")
        fresh = draw(bad.size)
        x[bad] = fresh
        bad = bad[outside(fresh)]
    if inp.integer:
        x = np.clip(np.round(x), math.ceil(lo), math.floor(hi))
    return x


def rank_correlate(draws: dict[str, np.ndarray], correlations: list[Mapping[str, Any]],
                   rng: np.random.Generator) -> None:
    """Re-order correlated inputs' draws (in place) to the ranks of correlated normal scores."""
    if not correlations:
        return
    names = sorted({p for c in correlations for p in c["inputs"]})
    matrix = riskspec.normal_score_correlation(names, correlations)
    lower = np.linalg.cholesky(matrix)
    n = len(next(iter(draws.values())))
    scores = rng.standard_normal((n, len(names))) @ lower.T
    for j, name in enumerate(names):
        # the draw with the k-th smallest score takes the k-th smallest value
        ordered = np.empty(n)
        ordered[np.argsort(scores[:, j], kind="stable")] = np.sort(draws[name], kind="stable")
        draws[name] = ordered


def sample(case: Case, n: int, rng: np.random.Generator, spec: Mapping[str, Any] | None = None) -> Inputs:
    """Draw every risk input of a case ``n`` times (with the failure event, unless switched off)."""
    spec = case.values.get("risk", {}) if spec is None else spec
    draws: dict[str, np.ndarray] = {}
    for path, dist in spec.get("inputs", {}).items():
        inp, _ = riskspec.resolve(path)
        draws[path] = sample_marginal(inp, dist, n, rng)
    rank_correlate(draws, spec.get("correlations", []), rng)
    failed = probability = None
    if spec.get("failure_event", True):
        if riskspec.SUCCESS in draws:
            probability = 1.0 - draws[riskspec.SUCCESS]
        elif "establishment.failure_probability" in draws:
            probability = draws["establishment.failure_probability"]
        else:
            probability = np.full(n, float(case["establishment.failure_probability"]))
        failed = rng.random(n) < probability
    return Inputs(draws, failed, probability)


#: most memory a risk run may ask for: the cumulative cash flow of every draw is kept (the percentile band)
MAX_MEMORY_BYTES = 4e9


def memory_estimate(draws: int, case: Case) -> float:
    """Bytes a run keeps: the cumulative cash flow per draw and year, the figures per draw, and the
    drawn inputs; the model itself runs in chunks of fixed size."""
    years = int(case.stand_life) + 6  # room for a drawn stand life
    return 8.0 * draws * (2 * years + 2 * len(FIGURES) + 32)


def default_inputs(case: Case) -> dict[str, dict[str, Any]]:
    """Triangular distributions (low, base, high) over the key inputs' sensitivity ranges.

    A mature yield estimated from the site climate is drawn over the estimate's own range (the light-use
    parameters at the ends of their published ranges) rather than the default share either side.
    """
    out: dict[str, dict[str, Any]] = {}
    for m in sensitivity.moved_inputs(case):
        path = "yield.mature_t_dm_per_ha" if m.path == sensitivity.LIGHT_USE else m.path
        inp, _ = riskspec.resolve(path)
        if inp is None or inp.integer or not (m.low < m.base < m.high):
            continue  # a whole number (stand life) or a range without a middle is left at its value
        out[path] = {"dist": "triangular", "low": m.low, "mode": m.base, "high": m.high}
    return out


def check_inputs(case: Case, spec: Mapping[str, Any]) -> None:
    """Refuse inputs the case does not use, or whose extreme values the case's rules reject."""
    problems: list[Problem] = []
    for path, dist in spec.get("inputs", {}).items():
        where = f"risk.inputs.{path}"
        if sensitivity.base_value(case, path) is None:
            problems.append(Problem(case.source, where, "the case does not use this key (it has no value); "
                                    "give it in the case first"))
            continue
        inp, _ = riskspec.resolve(path)
        lo, hi = riskspec.effective_bounds(inp, dist)
        if dist["dist"] in ("normal", "lognormal"):
            # unbounded tails: check where nearly all draws fall
            spread = 4.0 * dist["sd"]
            lo, hi = max(lo, dist["mean"] - spread), min(hi, dist["mean"] + spread)
        lo_p, hi_p, lo_open, hi_open = inp.bounds
        for side, v, bound, is_open in (("low", lo, lo_p, lo_open), ("high", hi, hi_p, hi_open)):
            if math.isfinite(v) and not (is_open and v == bound):  # no draw lands on an open bound
                problems.extend(sensitivity.check_value(case, path, v, f"{where}.{side}"))
    if problems:
        raise CaseError(problems)


def draw_values(case: Case, inputs: Inputs) -> dict[str, Any]:
    """Case values of every draw: the case's values with the drawn inputs and the failure event."""
    values: dict[str, Any] = dict(case.values)
    order = [p for p in inputs.draws if p != riskspec.COST_MULTIPLIER]
    if riskspec.COST_MULTIPLIER in inputs.draws:
        order.append(riskspec.COST_MULTIPLIER)
    for path in order:
        col = inputs.draws[path]
        inp, _ = riskspec.resolve(path)
        sensitivity.apply(values, path, col.astype(np.int64) if inp.integer else col)
    if inputs.failed is not None:
        # the event itself: the model's expected replanting and ramp-up delay become all (failed) or none
        values["establishment.failure_probability"] = inputs.failed.astype(float)
    return values


# ----------------------------------------------------------------------------- the run
@dataclass
class Stat:
    """Summary of one figure across draws (NaN draws left out and counted)."""

    percentiles: dict[int, float]
    mean: float
    sd: float
    se: float
    defined: int
    undefined: int

    def to_dict(self) -> dict[str, Any]:
        out = {f"p{q}": _num(v) for q, v in self.percentiles.items()}
        out.update(mean=_num(self.mean), sd=_num(self.sd), standard_error_of_mean=_num(self.se),
                   draws_defined=self.defined, draws_undefined=self.undefined)
        return out


def stat(x: np.ndarray) -> Stat:
    ok = x[~np.isnan(x)]
    k = ok.size
    if k == 0:
        nan = float("nan")
        return Stat({q: nan for q in PERCENTILES}, nan, nan, nan, 0, int(x.size))
    pct = np.percentile(ok, PERCENTILES)
    sd = float(np.std(ok, ddof=1)) if k > 1 else float("nan")  # one value has no sample sd (n - 1 = 0)
    return Stat({q: float(v) for q, v in zip(PERCENTILES, pct)}, float(ok.mean()), sd, sd / math.sqrt(k), int(k),
                int(x.size - k))


def percentiles_by_column(x: np.ndarray, qs=PERCENTILES) -> list[np.ndarray]:
    """Percentiles of each column of a (draws, years) array, numpy's default linear rule.

    The q-th percentile of n sorted values v is v[h] interpolated linearly at
    h = (n - 1) q / 100 (R. J. Hyndman and Y. Fan, "Sample quantiles in
    statistical packages", *The American Statistician* 50(4), 361-365, 1996,
    definition 7). Only the order statistics the percentiles read are put in
    place (a partition of each column, linear time), not the whole column sorted.

    >>> [v.tolist() for v in percentiles_by_column(np.array([[1.0, 10.0], [2.0, 30.0], [4.0, 20.0]]), (50, 75))]
    [[2.0, 20.0], [3.0, 25.0]]
    """
    n = x.shape[0]
    at = []
    for q in qs:
        h = (n - 1) * q / 100.0
        lo = int(math.floor(h))
        at.append((lo, min(lo + 1, n - 1), h - lo))
    ordered = np.partition(np.ascontiguousarray(x.T), sorted({i for lo, hi, _ in at for i in (lo, hi)}), axis=1)
    return [ordered[:, lo] + frac * (ordered[:, hi] - ordered[:, lo]) for lo, hi, frac in at]


@dataclass
class Probability:
    value: float
    se: float  # sqrt(p (1 - p) / n) as computed; read it through ``standard_error``
    of: int  # draws it is a share of

    @property
    def standard_error(self) -> float | None:
        """The binomial standard error where it says something: some draws on each side (see the module)."""
        return self.se if self.of >= 2 and 0.0 < self.value < 1.0 else None

    @property
    def upper_bound(self) -> float | None:
        """Where no draw falls on the side counted: the exact one-sided bound the chance lies below."""
        return 1.0 - (1.0 - BOUND_CONFIDENCE) ** (1.0 / self.of) if self.of and self.value == 0.0 else None

    @property
    def lower_bound(self) -> float | None:
        """Where every draw falls on the side counted: the exact one-sided bound the chance lies above."""
        return (1.0 - BOUND_CONFIDENCE) ** (1.0 / self.of) if self.of and self.value == 1.0 else None

    def to_dict(self) -> dict[str, Any]:
        se, up, low = self.standard_error, self.upper_bound, self.lower_bound
        return {"probability": _num(self.value), "standard_error": None if se is None else _num(se),
                "upper_bound_95": up, "lower_bound_95": low, "draws": self.of}


def probability(flags: np.ndarray) -> Probability:
    n = flags.size
    if n == 0:
        return Probability(float("nan"), float("nan"), 0)
    p = float(np.mean(flags))
    return Probability(p, math.sqrt(p * (1.0 - p) / n), n)


@dataclass
class RiskResult:
    case: Case
    draws: int
    seed: int
    figures: dict[str, np.ndarray]  # per draw
    stats: dict[str, Stat]
    prob_npv_negative: Probability
    prob_npv_vs_current_use_negative: Probability
    prob_dscr_below_covenant: Probability | None
    covenant: float
    failure_share: float | None
    band_years: np.ndarray
    band: dict[int, np.ndarray]  # percentile -> cumulative cash flow per year [currency ha⁻¹]
    histogram: tuple[np.ndarray, np.ndarray]  # counts, edges of NPV
    spec: dict[str, Any] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)  # for stderr: draws too few to read the results


def run(case: Case, draws: int | None = None, seed: int | None = None, progress: bool | None = None,
        chunk_rows: int = CHUNK_ROWS) -> RiskResult:
    """Monte Carlo of a case: draw the inputs, evaluate every draw at once, summarise.

    Parameters
    ----------
    case : Case
        With a ``[risk]`` section (without one only establishment failure is drawn).
    draws : int, optional
        Number of draws; default the section's ``draws``, else 10,000.
    seed : int, optional
        Seed of the random generator (numpy PCG64); default the section's, else 12345.
        The same case, draws and seed give the same results.
    progress : bool, optional
        A progress bar on stderr; default when stderr is a terminal (shown once a run lasts 0.5 s).
    """
    spec = dict(case.values.get("risk", {}) or {})
    n = int(draws if draws is not None else spec.get("draws", riskspec.DEFAULT_DRAWS))
    if not 1 <= n <= riskspec.MAX_DRAWS:
        raise CaseError([Problem(case.source, "--draws", f"expected 1 to {riskspec.MAX_DRAWS:,} draws, got {n}")])
    s = int(seed if seed is not None else spec.get("seed", riskspec.DEFAULT_SEED))
    if s < 0:
        raise CaseError([Problem(case.source, "--seed", f"expected a whole number >= 0, got {s}")])
    defaulted = "inputs" not in spec  # an empty [risk.inputs] table draws no input: failure alone
    if defaulted:  # no distributions declared: the sensitivity ranges, as triangular distributions
        spec["inputs"] = default_inputs(case)
    check_inputs(case, spec)
    estimate = memory_estimate(n, case)
    if estimate > MAX_MEMORY_BYTES:
        raise CaseError([Problem(case.source, "--draws", f"{n:,} draws would need about {estimate / 1e9:.1f} GB "
                                 f"(the cumulative cash flow of every draw is kept for its percentile band); "
                                 f"at most {MAX_MEMORY_BYTES / 1e9:.0f} GB: use fewer draws")])
    rng = np.random.default_rng(s)
    inputs = sample(case, n, rng, spec)
    values = draw_values(case, inputs)
    bar = screen.progress_bar(n, "drawing", progress, unit="draws")
    try:
        got = evaluate(values, figures=FIGURES, lines=("cumulative_cash_flow",), rows=n, chunk_rows=chunk_rows,
                       progress=bar.update)
    finally:
        bar.close()
    figs, cum = got.figures, got.lines["cumulative_cash_flow"]
    notes: list[str] = []
    stats = {name: stat(figs[name]) for name in ("npv", "npv_vs_current_use", "eav", "eav_vs_current_use", "irr")}
    if defaulted:
        notes.append("the case declares no [risk.inputs]: its sensitivity ranges are drawn as triangular "
                     "distributions (low, base, high) of " + ", ".join(riskspec.label(p) for p in spec["inputs"])
                     + (", with establishment failure" if inputs.failed is not None else ""))
    has_loan = figs["loan_principal"] > 0
    covenant = float(case["loan.dscr_covenant"])
    dscr_prob = None
    if has_loan.any():
        low = figs["min_dscr"][has_loan]  # over each draw's covenant test years (0: cash was negative)
        stats["min_dscr"] = stat(low)
        # an LLCR below 0 is no cover (the figure has no value): counted as 0, as the lowest DSCR counts
        # negative cash, so that its percentiles are not those of the covered draws alone
        no_cover = figs["llcr_no_cover_at_first_test"][has_loan] > 0
        stats["llcr"] = stat(np.where(no_cover, 0.0, figs["llcr"][has_loan]))
        if no_cover.any():
            notes.append(f"LLCR below 0 (no cover) in {no_cover.mean():.1%} of the draws with a loan: counted as 0 "
                         "in its percentiles (a negative ratio is not meaningful)")
        dscr_prob = probability(np.nan_to_num(low, nan=np.inf) < covenant)
    else:
        notes.append("no loan: the case borrows nothing, so no DSCR is computed")
    if stats["irr"].undefined:
        notes.append(f"IRR undefined in {stats['irr'].undefined / n:.1%} of the draws (no single rate, and no "
                     "single positive one by Norström's criterion); the IRR percentiles are of the other draws")
    band = dict(zip(PERCENTILES, percentiles_by_column(cum, PERCENTILES)))
    warnings = [few_draws_warning(n)] if n < STABLE_DRAWS else []
    counts, edges = np.histogram(figs["npv"], bins=HISTOGRAM_BINS)
    return RiskResult(
        case=case, draws=n, seed=s, figures=figs, stats=stats,
        prob_npv_negative=probability(figs["npv"] < 0),
        prob_npv_vs_current_use_negative=probability(figs["npv_vs_current_use"] < 0),
        prob_dscr_below_covenant=dscr_prob, covenant=covenant,
        failure_share=None if inputs.failed is None else float(inputs.failed.mean()),
        band_years=np.arange(cum.shape[1]), band=band, histogram=(counts, edges), spec=spec, notes=notes,
        warnings=warnings,
    )


def few_draws_warning(n: int) -> str:
    """Why ``n`` draws (fewer than :data:`STABLE_DRAWS`) give percentiles and odds that move with the seed."""
    tail = n * min(PERCENTILES) / 100.0
    beyond = f"{tail:g} draws" if tail >= 1 else "less than one draw"
    return (f"{n:,} draw{'s are' if n != 1 else ' is'} too few for stable percentiles and odds: P{min(PERCENTILES)} "
            f"and P{max(PERCENTILES)} rest on {beyond} beyond each; use {STABLE_DRAWS:,} draws or more (--draws)")


# ----------------------------------------------------------------------------- views
def _num(v: float) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None


def to_dict(res: RiskResult) -> dict[str, Any]:
    """JSON-able result (canonical metric units, per ha, the case's currency)."""
    c = res.case
    counts, edges = res.histogram
    return {
        **json_header(c),
        "draws": res.draws,
        "seed": res.seed,
        "generator": "numpy PCG64",
        "inputs": res.spec.get("inputs", {}),
        "correlations": res.spec.get("correlations", []),
        "failure_event": res.failure_share is not None,
        "failure_share": res.failure_share,
        "figures": {name: s.to_dict() for name, s in res.stats.items()},
        "irr_undefined_share": res.stats["irr"].undefined / res.draws,
        "prob_npv_negative": res.prob_npv_negative.to_dict(),
        "prob_npv_vs_current_use_negative": res.prob_npv_vs_current_use_negative.to_dict(),
        "dscr_covenant": res.covenant,
        "prob_min_dscr_below_covenant": None if res.prob_dscr_below_covenant is None else res.prob_dscr_below_covenant.to_dict(),
        "cumulative_cash_flow_band": {
            "years": res.band_years.tolist(),
            **{f"p{q}": [_num(v) for v in res.band[q]] for q in PERCENTILES},
        },
        "npv_histogram": {"edges": [_num(v) for v in edges], "counts": counts.tolist()},
        "notes": list(res.notes),
        "warnings": list(res.warnings),
        "cautions": list(CAUTIONS),
    }
