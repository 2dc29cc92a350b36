import { isRouteErrorResponse, Links, Meta, Outlet, Scripts, ScrollRestoration } from "react-router";
import type { Route } from "./+types/root";
import "@fontsource/noto-sans/latin-400.css";
import "@fontsource/noto-sans/latin-600.css";
import "@fontsource/noto-sans/latin-700.css";
import "./app.css";
import { PlanningCautions } from "./components/planning-cautions";

export const links: Route.LinksFunction = () => [{ rel: "icon", href: "/favicon.svg", type: "image/svg+xml" }];

export function Layout({ children }: { children: React.ReactNode }) {
  return (
    <html lang="en-GB">
      <head>
        <meta charSet="utf-8" />
        <meta name="viewport" content="width=device-width, initial-scale=1" />
        <Meta />
        <Links />
      </head>
      <body className="min-h-screen font-sans antialiased">
        {children}
        <ScrollRestoration />
        <Scripts />
      </body>
    </html>
  );
}

export default function App() {
  return <Outlet />;
}

export function ErrorBoundary({ error }: Route.ErrorBoundaryProps) {
  let title = "Something went wrong";
  let detail = "An unexpected error occurred. Nothing you saved has been lost.";
  let stack: string | undefined;
  if (isRouteErrorResponse(error)) {
    title = error.status === 404 ? "Page not found" : error.status === 403 ? "Not allowed" : `Error ${error.status}`;
    detail =
      typeof error.data === "string" && error.data
        ? error.data
        : error.status === 404
          ? "There is nothing at this address, or it belongs to an organisation you are not a member of."
          : error.statusText || detail;
  } else if (import.meta.env.DEV && error instanceof Error) {
    detail = error.message;
    stack = error.stack;
  }
  return (
    <main className="mx-auto max-w-2xl p-8">
      <p className="text-sm font-semibold tracking-wide text-accent">Equilibra</p>
      <h1 className="mt-2 text-2xl font-semibold">{title}</h1>
      <p className="mt-3">{detail}</p>
      <p className="mt-6">
        <a className="text-accent underline" href="/">
          Back to the start page
        </a>
      </p>
      {stack && <pre className="mt-6 overflow-x-auto bg-accent-soft p-4 text-xs">{stack}</pre>}
      <footer className="mt-10 border-t border-rule pt-4">
        <PlanningCautions compact />
      </footer>
    </main>
  );
}
