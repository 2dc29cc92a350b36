/**
 * A scenario with extra teams at one site on one service line: the change the capacity advisor
 * tries and the site outlook's teams-needed figure describes.
 *
 * A site without a pathway gets `count` more teams at its rate per team. A site with a pathway
 * gets each extra team at its bottleneck: the stage whose extra team raises the site's capacity
 * most (the least spare capacity per visit, c_s·μ_s/v_s), one team at a time, ties to the stage
 * listed first. A team added to any other stage leaves the site's capacity — and, near capacity,
 * most of its wait — where it was.
 */
import { siteQueueSpec } from "./build-problem";
import type { Scenario, ScenarioSiteLine } from "./scenario";
import { createSiteWaitModel } from "./site-wait";

export interface ExtraTeams {
  scenario: Scenario;
  /** For a pathway, the stage id each extra team went to, in order; empty for a single queue. */
  stages: string[];
}

/** A copy of `scenario` with `count` more teams at `siteId` on `lineId` (the original is not changed). */
export function addTeams(scenario: Scenario, siteId: string, lineId: string, count: number): ExtraTeams {
  if (!Number.isInteger(count) || count < 0) throw new RangeError(`count must be a whole number ≥ 0, got ${String(count)}`);
  const providerIndex = scenario.providers.findIndex((provider) => provider.id === siteId);
  if (providerIndex < 0) throw new RangeError(`unknown site "${siteId}"`);
  const provider = scenario.providers[providerIndex];
  const siteLine = provider.lines[lineId];
  if (!siteLine) throw new RangeError(`site "${siteId}" does not offer service line "${lineId}"`);
  if (count === 0) return { scenario, stages: [] };

  let updated: ScenarioSiteLine;
  const stages: string[] = [];
  if (!siteLine.stages) {
    updated = { ...siteLine, teams: (siteLine.teams as number) + count };
  } else {
    updated = { ...siteLine, stages: siteLine.stages.map((stage) => ({ ...stage })) };
    for (let added = 0; added < count; added++) {
      const stageIndex = bottleneckStage(updated);
      const target = (updated.stages as NonNullable<ScenarioSiteLine["stages"]>)[stageIndex];
      target.teams += 1;
      stages.push(target.id);
    }
  }
  const providers = scenario.providers.slice();
  providers[providerIndex] = { ...provider, lines: { ...provider.lines, [lineId]: updated } };
  return { scenario: { ...scenario, providers }, stages };
}

/** The stage whose one extra team gives the site the most capacity. */
function bottleneckStage(siteLine: ScenarioSiteLine): number {
  const stages = siteLine.stages as NonNullable<ScenarioSiteLine["stages"]>;
  let best = 0;
  let bestCapacity = -Infinity;
  stages.forEach((stage, index) => {
    const trial: ScenarioSiteLine = { ...siteLine, stages: stages.map((other, k) => (k === index ? { ...other, teams: other.teams + 1 } : other)) };
    const capacity = createSiteWaitModel(siteQueueSpec(trial), 0).capacity;
    if (capacity > bestCapacity + 1e-12) {
      best = index;
      bestCapacity = capacity;
    }
  });
  return best;
}
