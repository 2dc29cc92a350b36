/**
 * Choice, balking and price-of-anarchy rows of CHECKS.md, reproduced by the solvers.
 * Tolerances: the solvers converge to relative gap ≤ 1e-10 (in practice ~1e-15), so published
 * closed forms are matched to 1e-9 relative unless stated otherwise.
 */
import { describe, expect, it } from "vitest";
import { allocationTotalCost } from "../../../app/engine/allocation-cost";
import { solveChoice } from "../../../app/engine/equilibrium";
import { solveLogit } from "../../../app/engine/logit";
import { solveOptimum } from "../../../app/engine/optimum";
import type { LineProblem } from "../../../app/engine/problem";
import { lineProblem, loadsOf, mmc } from "./support/line-problem";

function totalCost(problem: LineProblem, result: ReturnType<typeof solveChoice>): number {
  return allocationTotalCost(problem, result.allocation, result.siteWait);
}

describe("unobservable M/M/1 with an outside option — Edelson & Hildebrand (1975), adapted", () => {
  // Edelson & Hildebrand (1975) "Congestion tolls for Poisson queuing processes", Econometrica
  // 43(1):81–92, in our units [derived]: cost = queue wait W(x) = x/(μ(μ − x)), sharp outside cost
  // o = 1 week, μ = 8/wk, demand 10/wk, no travel.
  // Choice: W(x) = o ⇒ x = oμ²/(1 + oμ) = 64/9; 10 − 64/9 = 26/9 balk; everyone pays 1 ⇒ total 10.
  // Optimum: d[x·W(x)]/dx = x(2μ − x)/(μ(μ − x)²) = o ⇒ x = μ(1 − 1/√(1 + oμ)) = 16/3, W = 1/4,
  // total = (16/3)(1/4) + (14/3)·1 = 6. Price of anarchy 10/6 = 5/3.
  const problem = lineProblem({ demand: [10], travel: [[0]], sites: [mmc(1, 8)], outsideCost: 1 });

  it("choice: inflow 64/9, 26/9 balk, total cost 10", () => {
    const choice = solveChoice(problem);
    expect(choice.diagnostics.converged).toBe(true);
    expect(choice.diagnostics.relativeGap).toBeLessThanOrEqual(1e-10);
    expect(choice.allocation.flow[0]).toBeCloseTo(64 / 9, 10);
    expect(choice.allocation.balked[0]).toBeCloseTo(2.888889, 6);
    expect(choice.siteWait[0]).toBeCloseTo(1, 10);
    expect(totalCost(problem, choice)).toBeCloseTo(10, 9);
  });

  it("optimum: inflow 16/3, wait 0.25, total cost 6; price of anarchy 5/3", () => {
    const optimum = solveOptimum(problem);
    expect(optimum.diagnostics.converged).toBe(true);
    expect(optimum.allocation.flow[0]).toBeCloseTo(16 / 3, 10);
    expect(optimum.siteWait[0]).toBeCloseTo(0.25, 10);
    expect(totalCost(problem, optimum)).toBeCloseTo(6, 9);
    expect(totalCost(problem, solveChoice(problem)) / totalCost(problem, optimum)).toBeCloseTo(5 / 3, 9);
  });
});

describe("Edelson & Hildebrand (1975), their original terms (sojourn cost, reward)", () => {
  // Edelson & Hildebrand (1975), Econometrica 43(1): M/M/1, μ = 1, reward R = 10, waiting cost
  // C = 1 per unit time in the system. A customer joins iff R ≥ C/(μ − λ): λ_e = μ − C/R = 0.9;
  // the social optimum maximises λ(R − C/(μ − λ)): λ* = μ − √(Cμ/R) = 0.683772.
  // In our model: the sojourn is wait + service time, so the service time 1/μ = 1 enters as a
  // constant "travel" cost; the reward is the sharp outside cost o = R (a patient stays iff the
  // public cost is below o); potential demand 2 > λ_e so that some balk.
  const problem = lineProblem({ demand: [2], travel: [[1]], sites: [mmc(1, 1)], outsideCost: 10 });

  it("selfish joining rate μ − C/R = 0.9", () => {
    expect(solveChoice(problem).allocation.flow[0]).toBeCloseTo(0.9, 10);
  });

  it("socially optimal joining rate μ − √(Cμ/R) = 0.683772", () => {
    const optimum = solveOptimum(problem);
    expect(optimum.allocation.flow[0]).toBeCloseTo(1 - Math.sqrt(0.1), 10);
    expect(optimum.allocation.flow[0]).toBeCloseTo(0.683772, 6);
  });
});

describe("parallel M/M/1 servers with sojourn costs — Bell & Stidham (1983)", () => {
  // Bell & Stidham (1983) "Individual versus social optimization in the allocation of customers to
  // alternative servers", Management Science 29(7):831–839 [values derived]: μ = (2, 1), λ = 1.
  // Sojourn 1/(μ − x) = queue wait + 1/μ, so 1/μ_j is the constant "travel" cost.
  // Selfish: the fast server alone gives sojourn 1/(2 − 1) = 1 = the idle slow server's 1/1, so
  // all go fast, cost 1. Optimum (equal marginal sojourn): 2/(2 − x)² = 1/(1 − y)² with y = 1 − x
  // ⇒ √2·x = 2 − x ⇒ x = 2(√2 − 1) = 0.828427,
  // y = 0.171573, cost x/(2 − x) + y/(1 − y) = 0.914214; price of anarchy 1.093836.
  const problem = lineProblem({ demand: [1], travel: [[0.5, 1]], sites: [mmc(1, 2), mmc(1, 1)] });

  it("selfish: everyone at the fast server, cost 1", () => {
    const choice = solveChoice(problem);
    expect(choice.allocation.flow[0]).toBeCloseTo(1, 9);
    expect(choice.allocation.flow[1]).toBeCloseTo(0, 9);
    expect(totalCost(problem, choice)).toBeCloseTo(1, 9);
  });

  it("optimum (0.828427, 0.171573), cost 0.914214, price of anarchy 1.093836", () => {
    const optimum = solveOptimum(problem);
    expect(optimum.allocation.flow[0]).toBeCloseTo(2 * (Math.SQRT2 - 1), 9);
    expect(optimum.allocation.flow[0]).toBeCloseTo(0.828427, 6);
    expect(optimum.allocation.flow[1]).toBeCloseTo(0.171573, 6);
    expect(totalCost(problem, optimum)).toBeCloseTo(0.914214, 6);
    expect(totalCost(problem, solveChoice(problem)) / totalCost(problem, optimum)).toBeCloseTo(1.093836, 6);
  });
});

describe("two practices, two sites (our model) — CHECKS.md [derived] to high precision", () => {
  // Demand (2.0, 1.5)/wk; sites M/M/2 and M/M/3 with μ = 1/wk per team; travel cost in weeks
  // [[0.1, 0.5], [0.6, 0.2]]; sharp outside cost 2. Values in CHECKS.md were derived from
  // PRODUCT.md's model with an independent high-precision solve; we match them to 1e-9.
  const problem = lineProblem({
    demand: [2, 1.5],
    travel: [[0.1, 0.5], [0.6, 0.2]],
    sites: [mmc(2, 1), mmc(3, 1)],
    outsideCost: 2,
  });

  it("choice: loads, waits, no balking, total 3.229178528763", () => {
    const choice = solveChoice(problem);
    const loads = loadsOf(problem, choice.allocation.flow);
    expect(loads[0]).toBeCloseTo(1.396414356286, 9);
    expect(loads[1]).toBeCloseTo(2.103585643714, 9);
    expect(choice.siteWait[0]).toBeCloseTo(0.951193865361, 9);
    expect(choice.siteWait[1]).toBeCloseTo(0.551193865361, 9);
    expect(choice.allocation.balked[0] + choice.allocation.balked[1]).toBeCloseTo(0, 9);
    expect(totalCost(problem, choice)).toBeCloseTo(3.229178528763, 9);
  });

  it("optimum: total 2.762658210195 with 0.526796628787/wk of practice 1 to private care; PoA 1.168866462325", () => {
    const optimum = solveOptimum(problem);
    expect(totalCost(problem, optimum)).toBeCloseTo(2.762658210195, 9);
    expect(optimum.allocation.balked[0]).toBeCloseTo(0.526796628787, 9);
    expect(optimum.allocation.balked[1]).toBeCloseTo(0, 9);
    const priceOfAnarchy = totalCost(problem, solveChoice(problem)) / totalCost(problem, optimum);
    expect(priceOfAnarchy).toBeCloseTo(1.168866462325, 9);
  });

  it("logit θ = 2 and θ = 10 loads", () => {
    const two = loadsOf(problem, solveLogit(problem, 2).allocation.flow);
    expect(two[0]).toBeCloseTo(1.312737940226, 9);
    expect(two[1]).toBeCloseTo(2.005242538496, 9);
    const ten = loadsOf(problem, solveLogit(problem, 10).allocation.flow);
    expect(ten[0]).toBeCloseTo(1.375441072364, 9);
    expect(ten[1]).toBeCloseTo(2.124490890939, 9);
  });
});
