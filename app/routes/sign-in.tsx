import { Form, data, redirect, useActionData, useNavigation, useSearchParams } from "react-router";
import { z } from "zod";
import { auth } from "../.server/auth.server";
import { env } from "../.server/env.server";
import { getUser } from "../.server/guards.server";
import { DEMO_ACCOUNTS, DEMO_PASSWORD } from "../.server/seed.server";
import { buttonClass, inputClass, Notice } from "../components/page";
import type { Route } from "./+types/sign-in";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await getUser(request);
  if (user) throw redirect(safeRedirect(new URL(request.url).searchParams.get("redirectTo")));
  return { demo: env().demo ? { emails: DEMO_ACCOUNTS.map((a) => a.email), password: DEMO_PASSWORD } : null };
}

const SignIn = z.object({
  email: z.string().trim().email("Enter the e-mail address of your account."),
  password: z.string().min(1, "Enter your password."),
  redirectTo: z.string().optional(),
});

export async function action({ request }: Route.ActionArgs) {
  const parsed = SignIn.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return data({ error: parsed.error.issues[0]!.message }, { status: 400 });
  const response = await auth().api.signInEmail({
    body: { email: parsed.data.email, password: parsed.data.password },
    asResponse: true,
    headers: request.headers,
  });
  if (!response.ok) return data({ error: "That e-mail and password do not match an account." }, { status: 401 });
  const headers = new Headers();
  for (const cookie of response.headers.getSetCookie()) headers.append("Set-Cookie", cookie);
  throw redirect(safeRedirect(parsed.data.redirectTo), { headers });
}

/** Only same-site paths: an open redirect would let a link send people elsewhere after sign-in. */
function safeRedirect(to: string | null | undefined): string {
  return to && to.startsWith("/") && !to.startsWith("//") ? to : "/";
}

export default function SignInPage({ loaderData }: Route.ComponentProps) {
  const result = useActionData<typeof action>();
  const [params] = useSearchParams();
  const busy = useNavigation().state !== "idle";
  return (
    <main className="flex min-h-screen items-center justify-center p-6">
      <div className="w-full max-w-sm">
        <p className="text-sm font-medium uppercase tracking-[0.2em] text-tide-600">Lissom</p>
        <h1 className="mt-1 text-2xl font-semibold">Sign in</h1>
        <p className="mt-1 text-sm text-ink-soft">Smooth curves from noisy linework, within a tolerance you set.</p>
        <Form method="post" className="mt-6 space-y-4 rounded-card border border-rule bg-card p-5">
          {result?.error && <Notice tone="error">{result.error}</Notice>}
          <input type="hidden" name="redirectTo" value={params.get("redirectTo") ?? "/"} />
          <label className="block text-sm font-medium">
            E-mail
            <input name="email" type="email" autoComplete="username" required className={`mt-1 ${inputClass}`} />
          </label>
          <label className="block text-sm font-medium">
            Password
            <input name="password" type="password" autoComplete="current-password" required className={`mt-1 ${inputClass}`} />
          </label>
          <button type="submit" className={`${buttonClass} w-full`} disabled={busy}>
            {busy ? "Signing in…" : "Sign in"}
          </button>
        </Form>
        {loaderData.demo && (
          <p className="mt-4 text-xs text-ink-soft">
            Demo mode: {loaderData.demo.emails.join(", ")} — password <code>{loaderData.demo.password}</code>.
          </p>
        )}
      </div>
    </main>
  );
}

export function meta() {
  return [{ title: "Sign in · Lissom" }];
}
