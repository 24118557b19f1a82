/**
 * The documented parameters of the demo workspace: an invented company, its four teams, its three
 * metric families and the known distribution of true effects the simulation draws from.
 * Everything later features check against the demo's truth is set here (docs/demo.md explains
 * each value). All names are invented; no real company, product or person is meant.
 *
 * Convention: effects are relative lifts (treatment / control - 1) of the metric's own value. All
 * three demo metrics have direction `increase`, so the stored (sign-flipped) lift and the true
 * effect below share a sign: positive is good.
 */
import type { EffectPrior } from "../stats/effect-prior.ts";

export type DemoFamily = "conversion" | "revenue" | "retention";

export const demoFamilies: readonly DemoFamily[] = ["conversion", "revenue", "retention"];

/** A closed range [low, high]; `low === high` pins the value. */
export interface DemoRange {
  readonly low: number;
  readonly high: number;
}

export interface DemoMetricParameters {
  /** The metric key written in the `metric` column (its family is the key, the importer's default). */
  readonly metric: string;
  readonly name: string;
  readonly kind: "binary" | "continuous";
  readonly direction: "increase";
  /** The unit randomised: visitors for the shop's funnel, first-time customers for retention. */
  readonly unit: string;
  /**
   * The known distribution of true effects of the *primary* results of this family (A/A tests
   * excluded: their effect is exactly 0). Point mass at 0 (the idea does nothing), half-normal
   * real wins and half-normal real losses; losses are more common and a little larger than wins.
   */
  readonly prior: EffectPrior;
  /**
   * Per test, drawn uniformly: the control's conversion rate (conversion), its payer share
   * (revenue: the share of visitors who order) or its return rate (retention).
   */
  readonly baselineRate: DemoRange;
  /** Units entering the test per day, both arms together; drawn log-uniformly per test. */
  readonly dailyUnits: DemoRange;
  /** Planned run lengths in days; one is drawn uniformly per test. */
  readonly runDays: readonly number[];
}

export interface DemoTeamParameters {
  readonly name: string;
  /** Prefix of the team's experiment keys, e.g. SPR-1042. */
  readonly keyPrefix: string;
  readonly focus: string;
  /** Share of the program's experiments this team runs. */
  readonly share: number;
  /** Probability of each primary metric family for this team's tests (sums to 1). */
  readonly primaryFamilies: Readonly<Partial<Record<DemoFamily, number>>>;
  /** Invented idea names the team's experiment names are built from. */
  readonly ideas: readonly string[];
}

export interface DemoParameters {
  readonly seed: number;
  /** Number of experiments (each has one primary result, and some a secondary one). */
  readonly experiments: number;
  readonly company: { readonly name: string; readonly product: string };
  /** The history spans these dates: every test starts and ends inside them. */
  readonly firstDay: string;
  readonly lastDay: string;
  readonly teams: readonly DemoTeamParameters[];
  readonly metrics: Readonly<Record<DemoFamily, DemoMetricParameters>>;
  /**
   * Spend of a paying visitor (revenue family): log-normal, log(spend) ~ N(logMean, logSd^2) in
   * the shop's currency. Revenue per visitor is 0 for non-payers, so it is zero-inflated and skewed.
   */
  readonly spend: { readonly logMean: number; readonly logSd: number };
  /** Share of experiments that are A/A tests (true effect exactly 0 on every metric). */
  readonly aaShare: number;
  /**
   * Secondary results. A conversion test's idea moves the payer share, so its revenue per visitor
   * moves by the same relative amount (true revenue effect = true conversion effect). A revenue
   * test's idea moves spend per payer only, so its conversion effect is exactly 0.
   */
  readonly secondary: {
    /** P(a conversion-primary test also reports revenue per visitor). */
    readonly revenueOnConversionTests: number;
    /** P(a revenue-primary test also reports the conversion rate). */
    readonly conversionOnRevenueTests: number;
  };
  /** The textbook design and decision rule: two-sided alpha, power at the planned MDE. */
  readonly alpha: number;
  readonly power: number;
  /**
   * Peeking: this share of tests is looked at when these fractions of the planned sample are in;
   * a look with |z| > z_{1 - alpha/2} stops the test there (stopped_early = true).
   */
  readonly peeking: { readonly share: number; readonly looks: readonly number[] };
  /**
   * Sample ratio mismatches: this many (non-A/A) tests lose a share of one arm's units before
   * analysis (e.g. a redirect drops visitors who would not have ordered). The lost units never
   * convert or spend, so the affected arm's rate is inflated by 1 / (1 - lost share): these rows are
   * biased. The share is at least what gives a chi-square z of `minimumZ` (flagged at p < 0.0005).
   */
  readonly sampleRatioMismatch: {
    readonly tests: number;
    readonly lostShare: DemoRange;
    readonly minimumZ: number;
  };
  readonly decisions: {
    /** A non-significant test with z above `iterateMinimumZ` is marked iterate with this probability. */
    readonly iterateShare: number;
    readonly iterateMinimumZ: number;
    /** Tests that ended within this many days of the last day are still pending. */
    readonly pendingDays: number;
  };
  /**
   * Holdouts: this many shipped tests are re-measured on a holdout about two months after they
   * ended. realized lift = true effect + N(0, realized SE^2), realized SE = factor * the test's SE.
   */
  readonly holdouts: {
    readonly count: number;
    readonly delayDays: DemoRange;
    readonly standardErrorFactor: DemoRange;
  };
  /**
   * How each experiment's results are written (the input forms of statistics.md section 1): raw
   * arm data (counts for binary metrics, means and sds for continuous ones), estimate + CI,
   * estimate + two-sided p-value, or estimate + SE; `percentShare` of the summary rows write their
   * lifts with a % sign, and `ninetyLevelShare` of the interval rows use a 90 % interval.
   */
  readonly reporting: {
    readonly raw: number;
    readonly interval: number;
    readonly pValue: number;
    readonly standardError: number;
    readonly percentShare: number;
    readonly ninetyLevelShare: number;
  };
}

/** Null share, real-win share and real-loss share of every family's prior. */
const nullShare = 0.57;
const winShare = 0.18;
const lossShare = 0.25;

function familyPrior(winScale: number, lossScale: number): EffectPrior {
  return {
    family: "assumed",
    components: [
      { component: { kind: "point", at: 0 }, weight: nullShare },
      { component: { kind: "halfNormal", sign: 1, scale: winScale }, weight: winShare },
      { component: { kind: "halfNormal", sign: -1, scale: lossScale }, weight: lossShare },
    ],
  };
}

export const defaultDemoParameters: DemoParameters = {
  seed: 20260930,
  experiments: 600,
  company: {
    name: "Quillfern Cycleworks",
    product: "an online shop for bicycle parts, tools and repair kits",
  },
  firstDay: "2023-10-01",
  lastDay: "2026-09-30",
  teams: [
    {
      name: "Sprocket",
      keyPrefix: "SPR",
      focus: "basket and checkout",
      share: 0.3,
      primaryFamilies: { conversion: 0.85, revenue: 0.15 },
      ideas: [
        "One-page checkout",
        "Express pay button",
        "Guest checkout by default",
        "Delivery cost shown in basket",
        "Address autocomplete",
        "Trust badges at payment",
        "Saved baskets",
        "Fewer form fields",
        "Delivery date picker",
        "Sticky basket summary",
        "Order review step removed",
        "Click-and-collect option",
      ],
    },
    {
      name: "Spoke",
      keyPrefix: "SPK",
      focus: "catalogue and search",
      share: 0.28,
      primaryFamilies: { conversion: 0.6, revenue: 0.4 },
      ideas: [
        "Fit finder for frame size",
        "Search typo tolerance",
        "Compatibility badges",
        "Larger product photos",
        "Filter by wheel size",
        "Recently viewed strip",
        "Sort by availability",
        "Exploded-view diagrams",
        "Stock level on listing",
        "Related spares carousel",
        "Category landing redesign",
        "Instant search results",
      ],
    },
    {
      name: "Chainring",
      keyPrefix: "CHR",
      focus: "pricing, bundles and offers",
      share: 0.2,
      primaryFamilies: { revenue: 0.8, conversion: 0.2 },
      ideas: [
        "Service kit bundles",
        "Free delivery threshold",
        "Tiered multibuy discount",
        "Upgrade suggestion at basket",
        "Price anchoring on sets",
        "Loyalty points preview",
        "Seasonal tune-up offer",
        "Premium range first",
        "Gift card upsell",
        "Spare tube add-on",
        "Bundle builder",
        "Member prices shown",
      ],
    },
    {
      name: "Kickstand",
      keyPrefix: "KCK",
      focus: "accounts and lifecycle",
      share: 0.22,
      primaryFamilies: { retention: 1 },
      ideas: [
        "Maintenance reminder email",
        "Ride log in account",
        "Welcome series rewrite",
        "Reorder from past orders",
        "Workshop booking prompt",
        "Wear-part countdown",
        "Referral nudge",
        "Push notification opt-in",
        "Personal parts list",
        "Win-back voucher",
        "Onboarding checklist",
        "Monthly tips digest",
      ],
    },
  ],
  metrics: {
    conversion: {
      metric: "order_conversion",
      name: "Order conversion rate",
      kind: "binary",
      direction: "increase",
      unit: "visitor",
      prior: familyPrior(0.04, 0.045),
      baselineRate: { low: 0.025, high: 0.045 },
      dailyUnits: { low: 4000, high: 60000 },
      runDays: [14, 21, 28],
    },
    revenue: {
      metric: "revenue_per_visitor",
      name: "Revenue per visitor",
      kind: "continuous",
      direction: "increase",
      unit: "visitor",
      prior: familyPrior(0.05, 0.055),
      baselineRate: { low: 0.025, high: 0.045 },
      dailyUnits: { low: 6000, high: 80000 },
      runDays: [14, 21, 28],
    },
    retention: {
      metric: "return_rate_28d",
      name: "28-day return rate",
      kind: "binary",
      direction: "increase",
      unit: "first-time customer",
      prior: familyPrior(0.02, 0.025),
      baselineRate: { low: 0.28, high: 0.36 },
      dailyUnits: { low: 300, high: 3000 },
      runDays: [21, 28, 42],
    },
  },
  spend: { logMean: Math.log(62), logSd: 0.9 },
  aaShare: 0.04,
  secondary: { revenueOnConversionTests: 0.5, conversionOnRevenueTests: 0.6 },
  alpha: 0.05,
  power: 0.8,
  peeking: { share: 0.1, looks: [0.25, 0.5, 0.75] },
  sampleRatioMismatch: { tests: 6, lostShare: { low: 0.02, high: 0.06 }, minimumZ: 6 },
  decisions: { iterateShare: 0.35, iterateMinimumZ: 1, pendingDays: 14 },
  holdouts: {
    count: 40,
    delayDays: { low: 50, high: 70 },
    standardErrorFactor: { low: 0.7, high: 1.5 },
  },
  reporting: {
    raw: 0.5,
    interval: 0.2,
    pValue: 0.15,
    standardError: 0.15,
    percentShare: 0.3,
    ninetyLevelShare: 0.25,
  },
};
