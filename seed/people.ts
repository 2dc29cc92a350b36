/**
 * The invented people of the demo: one per role in the Caldervey Commissioning Board, and one
 * administrator of a second, neighbouring body (so that tenancy can be tried by hand and in tests).
 * The local fake identity provider offers exactly these people to sign in as.
 *
 * Identity-provider ids start with "demo-": GitHub's ids are numbers, so no real GitHub account can
 * ever match a demo person, even when the app runs with real GitHub credentials over seeded data.
 * Addresses use example.org (RFC 2606), which never delivers mail.
 */
import type { Role } from "../app/db/schema";

export const DEMO_ORGANISATIONS = [
  { slug: "caldervey", name: "Caldervey Commissioning Board" },
  { slug: "upper-caldervey", name: "Upper Caldervey Commissioning Board" },
] as const;

export type DemoOrganisationSlug = (typeof DEMO_ORGANISATIONS)[number]["slug"];

export interface DemoPerson {
  githubId: string;
  login: string;
  name: string;
  email: string;
  role: Role;
  /** For provider managers: the sites whose outlook they may see. */
  siteCodes?: string[];
  /** The organisation the person belongs to (its slug). */
  organisation: DemoOrganisationSlug;
}

export const DEMO_PEOPLE: readonly DemoPerson[] = [
  { githubId: "demo-ada-administrator", login: "ada-administrator", name: "Ada Pellow", email: "ada.pellow@example.org", role: "administrator", organisation: "caldervey" },
  { githubId: "demo-piet-planner", login: "piet-planner", name: "Piet Harrowgate", email: "piet.harrowgate@example.org", role: "planner", organisation: "caldervey" },
  {
    githubId: "demo-mina-provider",
    login: "mina-provider",
    name: "Mina Corrander",
    email: "mina.corrander@example.org",
    role: "provider_manager",
    siteCodes: ["ZZS2"],
    organisation: "caldervey",
  },
  { githubId: "demo-olu-access", login: "olu-access", name: "Olu Brackwater", email: "olu.brackwater@example.org", role: "access_officer", organisation: "caldervey" },
  { githubId: "demo-rhea-reader", login: "rhea-reader", name: "Rhea Tamsett", email: "rhea.tamsett@example.org", role: "reader", organisation: "caldervey" },
  {
    githubId: "demo-noor-neighbour",
    login: "noor-neighbour",
    name: "Noor Halvey",
    email: "noor.halvey@example.org",
    role: "administrator",
    organisation: "upper-caldervey",
  },
];
