/**
 * Small scenarios for the outlook tests and an M/M/c written out here, independently of the
 * engine's kernels: Erlang C by its factorial sum (Erlang 1917; Kleinrock 1975, *Queueing
 * Systems* vol. 1 §3.5 — from memory), exact for the few teams used in these tests.
 */
import { parseScenario, type Scenario } from "../../../app/engine/scenario";

export function erlangCBySum(servers: number, load: number): number {
  let term = 1;
  let sum = 1;
  for (let k = 1; k < servers; k++) {
    term *= load / k;
    sum += term;
  }
  const top = (term * load) / servers / (1 - load / servers);
  return top / (sum + top);
}

/** Mean wait in queue Wq = C(c, λ/μ)/(cμ − λ). */
export function mmcQueueWaitBySum(servers: number, rate: number, arrival: number): number {
  return erlangCBySum(servers, arrival / rate) / (servers * rate - arrival);
}

/** P(Wq ≤ t) = 1 − C·exp(−(cμ − λ)t) for M/M/c FCFS. */
export function shareWithinBySum(servers: number, rate: number, arrival: number, weeks: number): number {
  return 1 - erlangCBySum(servers, arrival / rate) * Math.exp(-(servers * rate - arrival) * weeks);
}

/** Three practices, three sites, two lines, a spread outside option: small enough to enumerate every placement. */
export function threeSiteScenario(): Scenario {
  return parseScenario({
    schema: "equilibra/scenario@1",
    name: "Three sites",
    kmPerWeek: 15,
    circuity: 1,
    serviceLines: [
      { id: "ortho", standardWeeks: 18 },
      { id: "derm", standardWeeks: 18 },
    ],
    sources: [
      { id: "S1", lat: 0, lon: 0, demand: { ortho: 9, derm: 5 }, outsideCost: 20, outsideSpread: 0.5, deprivationDecile: 2 },
      { id: "S2", lat: 0, lon: 0.3, demand: { ortho: 6, derm: 6 }, outsideCost: 20, outsideSpread: 0.5, deprivationDecile: 5 },
      { id: "S3", lat: 0.3, lon: 0.1, demand: { ortho: 4, derm: 3 }, outsideCost: 20, outsideSpread: 0.5, deprivationDecile: 9 },
    ],
    providers: [
      { id: "A", lat: 0, lon: 0.05, sector: "public", lines: { ortho: { teams: 2, ratePerTeam: 5 }, derm: { teams: 1, ratePerTeam: 6 } } },
      { id: "B", lat: 0.05, lon: 0.3, sector: "public", lines: { ortho: { teams: 1, ratePerTeam: 5 }, derm: { teams: 1, ratePerTeam: 5 } } },
      { id: "C", lat: 0.3, lon: 0.3, sector: "independent", lines: { ortho: { teams: 1, ratePerTeam: 4 } } },
    ],
  });
}
