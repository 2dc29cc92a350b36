import { type RouteConfig, index, route } from "@react-router/dev/routes";

export default [
  index("routes/home.tsx"),
  // Sign-in, organisations and members (app/auth, app/models/{users,organisations,invitations}.server.ts)
  route("sign-in", "routes/sign-in.tsx"),
  route("auth/github", "routes/auth.github.tsx"),
  route("auth/github/callback", "routes/auth.github.callback.tsx"),
  route("sign-out", "routes/sign-out.tsx"),
  route("welcome", "routes/welcome.tsx"),
  route("invitations/:token", "routes/invitations.$token.tsx"),
  route("dev/mailbox", "routes/dev.mailbox.tsx"),
  route("api/stripe/webhook", "routes/api.stripe.webhook.ts"),
  // The scenario workspace and its JSON API (app/models/{scenarios,runs,api-tokens,csv-*}, app/auth/api-guards.server.ts)
  route("api/v1/solve", "routes/api.v1.solve.ts"),
  route("api/v1/o/:org/scenarios", "routes/api.v1.o.$org.scenarios.ts"),
  route("api/v1/o/:org/scenarios/:id", "routes/api.v1.o.$org.scenarios.$id.ts"),
  route("api/v1/o/:org/scenarios/:id/export", "routes/api.v1.o.$org.scenarios.$id.export.ts"),
  route("api/v1/o/:org/scenarios/:id/import", "routes/api.v1.o.$org.scenarios.$id.import.ts"),
  route("api/v1/o/:org/scenarios/:id/runs", "routes/api.v1.o.$org.scenarios.$id.runs.ts"),
  route("api/v1/o/:org/runs/:runId", "routes/api.v1.o.$org.runs.$runId.ts"),
  // Pages of one organisation, inside its shell (app/routes/o.$org.tsx checks membership).
  route("o/:org", "routes/o.$org.tsx", [
    index("routes/o.$org._index.tsx"),
    route("members", "routes/o.$org.members.tsx"),
    route("billing", "routes/o.$org.billing.tsx"),
    route("billing/success", "routes/o.$org.billing.success.tsx"),
    route("billing/cancel", "routes/o.$org.billing.cancel.tsx"),
    route("scenarios", "routes/o.$org.scenarios.tsx"),
    route("scenarios/:id", "routes/o.$org.scenarios.$id.tsx"),
    route("scenarios/:id/settings", "routes/o.$org.scenarios.$id.settings.tsx"),
    route("api", "routes/o.$org.api.tsx"),
    route("settings/tokens", "routes/o.$org.settings.tokens.tsx"),
  ]),
  route("*", "routes/not-found.tsx"),
] satisfies RouteConfig;
