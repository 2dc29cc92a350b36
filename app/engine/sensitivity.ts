/**
 * How balking responds to the private price and to added capacity, each point re-solved.
 *
 * Balking is the share of referrals whose reservation cost (the private option's cost, spread
 * uniformly over [o(1 − s), o(1 + s)]) is below what the public system costs them; both sides of
 * that comparison move when the price or the capacity does — waits fall as patients leave and
 * rise as they return — so every point of a curve is a fresh solve of every line, never a
 * derivative extrapolated from the baseline. Consecutive points start from the previous point's
 * site waits (they are close).
 *
 * - Private cost: every practice's outside-option cost o is multiplied by the factor (a practice
 *   with no outside option keeps none).
 * - Added capacity: every site's capacity on every line is multiplied by the factor, exactly as a
 *   period's teams factor does (`scaleTeams`: teams rounded, rate per team adjusted so that
 *   teams × rate is scaled by the factor).
 */
import { buildLineProblem } from "./build-problem";
import { RESOLVED_RULES, solveLineRule, type ResolvedRule } from "./line-rule-solve";
import type { Scenario, ScenarioPeriod } from "./scenario";

export interface SensitivityOptions {
  /** Multipliers of the private (outside-option) cost. Default 0.5, 0.75, 1, 1.25, 1.5. */
  privateCostFactors?: readonly number[];
  /** Multipliers of every site's capacity. Default 1, 1.05, 1.1, 1.2, 1.3. */
  capacityFactors?: readonly number[];
  /** Rules to re-solve. Default choice only (balking is patients' response; the optimum decides it centrally). */
  rules?: readonly ResolvedRule[];
  /** Service lines. Default every line. */
  lines?: readonly string[];
}

export interface SensitivityPoint {
  factor: number;
  /** Routine referrals/week leaving for private care, per rule (over the chosen lines). */
  balkedPerWeek: Partial<Record<ResolvedRule, number>>;
  /** The same per line. */
  balkedByLine: Record<string, Partial<Record<ResolvedRule, number>>>;
  totalCost: Partial<Record<ResolvedRule, number>>;
  converged: boolean;
}

export interface BalkingSensitivity {
  lines: string[];
  rules: ResolvedRule[];
  privateCost: SensitivityPoint[];
  capacity: SensitivityPoint[];
}

const DEFAULT_PRIVATE_COST_FACTORS = [0.5, 0.75, 1, 1.25, 1.5];
const DEFAULT_CAPACITY_FACTORS = [1, 1.05, 1.1, 1.2, 1.3];

function checkFactors(factors: readonly number[], name: string): number[] {
  if (factors.length === 0) throw new RangeError(`${name} must list at least one factor`);
  factors.forEach((factor, index) => {
    if (!(Number.isFinite(factor) && factor > 0)) throw new RangeError(`${name}[${index}] must be a factor > 0, got ${String(factor)}`);
  });
  return [...factors];
}

/** A copy of the scenario with every outside-option cost multiplied by `factor`. */
export function scaleOutsideCost(scenario: Scenario, factor: number): Scenario {
  if (factor === 1) return scenario;
  const scale = (cost: Scenario["sources"][number]["outsideCost"]): Scenario["sources"][number]["outsideCost"] => {
    if (cost === null || cost === undefined) return cost;
    if (typeof cost === "number") return cost * factor;
    return Object.fromEntries(Object.entries(cost).map(([line, value]) => [line, value === null ? null : value * factor]));
  };
  return { ...scenario, sources: scenario.sources.map((source) => ({ ...source, outsideCost: scale(source.outsideCost) })) };
}

/** The re-solved curves of balking against the private cost and against capacity. */
export function balkingSensitivity(scenario: Scenario, options: SensitivityOptions = {}): BalkingSensitivity {
  const privateCostFactors = checkFactors(options.privateCostFactors ?? DEFAULT_PRIVATE_COST_FACTORS, "privateCostFactors");
  const capacityFactors = checkFactors(options.capacityFactors ?? DEFAULT_CAPACITY_FACTORS, "capacityFactors");
  const rules = options.rules ? [...options.rules] : (["choice"] as ResolvedRule[]);
  for (const rule of rules) if (!RESOLVED_RULES.includes(rule)) throw new RangeError(`rules: unknown rule "${String(rule)}" (choice or optimum)`);
  const known = scenario.serviceLines.map((line) => line.id);
  const lines = options.lines ? [...options.lines] : known;
  for (const line of lines) if (!known.includes(line)) throw new RangeError(`lines: unknown service line "${line}" (known: ${known.join(", ")})`);

  const curve = (factors: number[], variant: (factor: number) => { scenario: Scenario; period?: ScenarioPeriod }): SensitivityPoint[] => {
    const warm = new Map<string, Float64Array>();
    return factors.map((factor) => {
      const { scenario: changed, period } = variant(factor);
      const point: SensitivityPoint = { factor, balkedPerWeek: {}, balkedByLine: {}, totalCost: {}, converged: true };
      for (const lineId of lines) {
        const build = buildLineProblem(changed, lineId, period);
        point.balkedByLine[lineId] = {};
        for (const rule of rules) {
          const key = `${lineId}:${rule}`;
          const outcome = solveLineRule(build, rule, warm.get(key));
          warm.set(key, outcome.siteWait);
          point.balkedByLine[lineId][rule] = outcome.balkedPerWeek;
          point.balkedPerWeek[rule] = (point.balkedPerWeek[rule] ?? 0) + outcome.balkedPerWeek;
          point.totalCost[rule] = (point.totalCost[rule] ?? 0) + outcome.totalCost;
          point.converged &&= outcome.converged;
        }
      }
      return point;
    });
  };

  return {
    lines,
    rules,
    privateCost: curve(privateCostFactors, (factor) => ({ scenario: scaleOutsideCost(scenario, factor) })),
    // A period with only a teams factor scales capacity exactly as the periods of a scenario do.
    capacity: curve(capacityFactors, (factor) => ({
      scenario,
      period: factor === 1 ? undefined : { id: `capacity×${factor}`, weeks: 1, demandFactor: 1, teamsFactor: factor },
    })),
  };
}
