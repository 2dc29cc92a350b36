import type { Route } from "./+types/home";

export function meta(_: Route.MetaArgs) {
  return [{ title: "Equilibra — planning elective care capacity and patient choice" }];
}

export default function Home() {
  return (
    <main className="mx-auto max-w-3xl p-8">
      <h1 className="text-3xl font-semibold">Equilibra</h1>
      <p className="mt-4 text-ink-soft">Where patients go when they may choose, and what each referral rule does.</p>
    </main>
  );
}
