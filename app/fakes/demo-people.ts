/**
 * The people the local fake identity provider offers to sign in as: the demo's people, defined once
 * in `seed/people.ts` so that the seed and the fake cannot drift apart.
 */
export { DEMO_PEOPLE, type DemoPerson } from "../../seed/people";
