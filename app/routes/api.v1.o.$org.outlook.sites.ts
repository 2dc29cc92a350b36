/**
 * GET /api/v1/o/:org/outlook/sites?run=&rule=&line=&target=&standard= — the site inflow outlook of
 * a run (default: the latest the caller may see), every period, for the caller's sites only.
 *     &format=csv — the same rows as CSV, headed by the run, data date, assumptions and cautions.
 * Provider managers: published runs and their own sites only; anything else answers 404.
 */
import { siteOutlookResponse } from "./site-outlook-response.server";
import type { Route } from "./+types/api.v1.o.$org.outlook.sites";

export async function loader({ request, params }: Route.LoaderArgs) {
  return siteOutlookResponse(request, params.org, undefined);
}
