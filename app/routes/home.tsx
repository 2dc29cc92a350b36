import { Link, redirect } from "react-router";
import { getOptionalUser, landingPathFor } from "~/auth/guards.server";
import { EquilibraMark } from "~/components/app-shell";
import { PlanningCautions } from "~/components/planning-cautions";
import type { Route } from "./+types/home";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await getOptionalUser(request);
  if (user) throw redirect(await landingPathFor(user));
  return null;
}

const QUESTIONS = [
  ["Where will patients go?", "Free choice settles where no patient can cut their wait-plus-journey by going elsewhere — a Wardrop equilibrium over M/M/c queues."],
  ["What would a referral hub do?", "The central optimum minimises the total of waiting, travel and care lost to the private sector; the price of anarchy measures the gap."],
  ["Who is left behind?", "Balking to private care, journey burden and waits by practice and deprivation decile, beside every efficiency figure."],
] as const;

export default function Home() {
  return (
    <div className="flex min-h-screen flex-col">
      <main className="mx-auto w-full max-w-4xl flex-1 px-6 py-16">
        <div className="flex items-center gap-3">
          <EquilibraMark size={40} />
          <h1 className="text-4xl font-semibold">Equilibra</h1>
        </div>
        <p className="mt-6 max-w-2xl text-lg text-ink-soft">
          Plan elective care capacity for a population: compare referral rules — free choice, a central referral hub, nearest site,
          contracted volumes — by their waits, travel, equity and the patients lost to private care.
        </p>
        <p className="mt-8">
          <Link to="/sign-in" className="inline-block rounded bg-accent px-5 py-2.5 font-semibold text-white hover:opacity-90">
            Sign in
          </Link>
        </p>
        <dl className="mt-14 grid gap-8 sm:grid-cols-3">
          {QUESTIONS.map(([question, answer]) => (
            <div key={question}>
              <dt className="font-semibold">{question}</dt>
              <dd className="mt-2 text-sm text-ink-soft">{answer}</dd>
            </div>
          ))}
        </dl>
      </main>
      <footer className="border-t border-rule bg-white">
        <div className="mx-auto max-w-4xl px-6 py-4">
          <PlanningCautions compact />
        </div>
      </footer>
    </div>
  );
}

export function meta(_: Route.MetaArgs) {
  return [{ title: "Equilibra — planning elective care capacity and patient choice" }];
}
