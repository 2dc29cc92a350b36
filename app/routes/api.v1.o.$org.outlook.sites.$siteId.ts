/**
 * GET /api/v1/o/:org/outlook/sites/:siteId — one site's outlook (same query and CSV export as the
 * list). A site outside the caller's scope answers 404, like one that does not exist.
 */
import { siteOutlookResponse } from "./site-outlook-response.server";
import type { Route } from "./+types/api.v1.o.$org.outlook.sites.$siteId";

export async function loader({ request, params }: Route.LoaderArgs) {
  return siteOutlookResponse(request, params.org, params.siteId);
}
