/**
 * Role names as people read them. Not a server module: pages use the labels in their components too.
 */
import type { Role } from "~/db/schema";

export const ROLE_LABELS: Record<Role, string> = {
  administrator: "Administrator",
  planner: "Planner",
  provider_manager: "Provider manager",
  access_officer: "Patient-access officer",
  reader: "Reader",
};
