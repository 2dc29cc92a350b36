/**
 * The people the local fake identity provider offers to sign in as: the demo organisation's people,
 * one per role. PROVISIONAL copy with the shape of `seed/people.ts` (`DEMO_PEOPLE`); once that file
 * lands this module becomes a re-export of it, so the seed and the fake cannot drift apart.
 */
export interface DemoPerson {
  githubId: number | string;
  login: string;
  name: string;
  email: string;
  role: string;
}

export const DEMO_PEOPLE: readonly DemoPerson[] = [
  { githubId: 910001, login: "ada-administrator", name: "Ada Pellow", email: "ada.pellow@example.org", role: "administrator" },
  { githubId: 910002, login: "piet-planner", name: "Piet Harrowgate", email: "piet.harrowgate@example.org", role: "planner" },
  { githubId: 910003, login: "mina-provider", name: "Mina Corrander", email: "mina.corrander@example.org", role: "provider_manager" },
  { githubId: 910004, login: "olu-access", name: "Olu Brackwater", email: "olu.brackwater@example.org", role: "access_officer" },
  { githubId: 910005, login: "rhea-reader", name: "Rhea Tamsett", email: "rhea.tamsett@example.org", role: "reader" },
];
