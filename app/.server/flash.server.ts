import { createCookie } from "react-router";

/** A short message shown once on the next page (after a redirect). */
const flashCookie = createCookie("lissom_notice", { path: "/", httpOnly: true, sameSite: "lax", maxAge: 60 });

export async function setNotice(message: string): Promise<Record<string, string>> {
  return { "Set-Cookie": await flashCookie.serialize(message) };
}

export async function takeNotice(request: Request): Promise<{ notice: string | null; headers: Record<string, string> }> {
  const notice = (await flashCookie.parse(request.headers.get("Cookie"))) as string | null;
  if (!notice) return { notice: null, headers: {} };
  return { notice, headers: { "Set-Cookie": await flashCookie.serialize("", { maxAge: 0 }) } };
}
