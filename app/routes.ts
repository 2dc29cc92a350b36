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
  route("o/:org/members", "routes/o.$org.members.tsx"),
  route("dev/mailbox", "routes/dev.mailbox.tsx"),
  route("o/:org/billing", "routes/o.$org.billing.tsx"),
  route("o/:org/billing/success", "routes/o.$org.billing.success.tsx"),
  route("o/:org/billing/cancel", "routes/o.$org.billing.cancel.tsx"),
  route("api/stripe/webhook", "routes/api.stripe.webhook.ts"),
  route("*", "routes/not-found.tsx"),
] satisfies RouteConfig;
