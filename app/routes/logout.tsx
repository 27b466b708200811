// Signing out is a POST (a link or an image on another page must not sign anyone out).
import { redirect } from "react-router";
import { endSession } from "~/services/session.server";
import type { Route } from "./+types/logout";

export async function loader() {
  return redirect("/");
}

export async function action({ request }: Route.ActionArgs) {
  return redirect("/", { headers: { "Set-Cookie": await endSession(request) } });
}
