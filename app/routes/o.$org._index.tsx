import { redirect } from "react-router";
import { requireMembership } from "~/auth/guards.server";
import type { Route } from "./+types/o.$org._index";

/** /o/:org opens the scenario list. */
export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation } = await requireMembership(request, params.org);
  throw redirect(`/o/${organisation.slug}/scenarios`);
}
