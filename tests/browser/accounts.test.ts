// Two people in two browsers: one signs up, creates a project and invites the other by e-mail; the other opens
// the e-mailed link, creates an account through it and lands in the project with the invited role.
// Run: TEST_PORT=3111 bin/serve-test &  then
//      TEST_PORT=3111 TRACEWELL_URL=http://localhost:3111 bin/with-test-env npx vitest run --config vitest.browser.config.ts tests/browser/accounts.test.ts
import { randomUUID } from "node:crypto";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { gotoHydrated, isLocal, newPerson, screenshot } from "../support/browser";
import { firstLink, waitForMail } from "../support/outbox";

type PersonHandle = Awaited<ReturnType<typeof newPerson>>;

describe("accounts in the browser", () => {
  let maren: PersonHandle;
  let tobias: PersonHandle;
  const tag = randomUUID().slice(0, 8);
  const marenEmail = `maren-${tag}@example.test`;
  const tobiasEmail = `tobias-${tag}@example.test`;
  const projectName = `Wren kettle packshots ${tag}`;

  beforeAll(async () => {
    maren = await newPerson();
    tobias = await newPerson();
  });
  afterAll(async () => {
    await maren?.close();
    await tobias?.close();
  });

  it("signs up, creates a project and invites a colleague, who joins through the e-mailed link as editor", async () => {
    const a = maren.page;
    await gotoHydrated(a, "/signup");
    await a.getByLabel("Name").fill("Maren Oduya");
    await a.getByLabel("E-mail").fill(marenEmail);
    await a.getByLabel("Password").fill("glazed ceramic kettle");
    await a.getByRole("button", { name: "Create account" }).click();
    await a.waitForURL(/\/projects$/);
    await a.waitForSelector("html[data-hydrated=true]");

    await a.getByLabel("Name").fill(projectName);
    await a.getByRole("button", { name: "Create project" }).click();
    await a.waitForURL(/\/projects\/[0-9a-f-]{36}$/);
    await expect(a.getByTestId("project-name").textContent()).resolves.toBe(projectName);
    await expect(a.getByTestId("role-badge").first().textContent()).resolves.toBe("Owner");

    await a.getByRole("link", { name: "Members" }).click();
    await a.waitForURL(/\/members$/);
    await a.getByLabel("E-mail", { exact: true }).fill(tobiasEmail);
    await a.getByLabel("Role", { exact: true }).selectOption("editor");
    await a.getByRole("button", { name: "Send invitation" }).click();
    await a.getByText(`Invitation sent to ${tobiasEmail}.`).waitFor();
    await a.getByText("Waiting for an answer").waitFor();
    await screenshot(a, "accounts-members-invited");

    // The invitation arrives by e-mail; its link is opened in the second person's browser.
    const mail = await waitForMail(tobiasEmail, new RegExp(`invited you to "${projectName}"`));
    const link = new URL(firstLink(mail, "/invitations/"));
    const b = tobias.page;
    await gotoHydrated(b, link.pathname);
    await b.getByText("Create your Tracewell account to accept.").waitFor();
    await b.getByLabel("Your name").fill("Tobias Reyne");
    await b.getByLabel("Password").fill("carafe in the window light");
    await b.getByRole("button", { name: "Create account and join" }).click();
    await b.waitForURL(/\/projects\/[0-9a-f-]{36}$/);
    await b.waitForSelector("html[data-hydrated=true]");
    await expect(b.getByTestId("project-name").textContent()).resolves.toBe(projectName);
    await expect(b.getByTestId("role-badge").first().textContent()).resolves.toBe("Editor");
    // Editors see no Activity tab; the project is in their sidebar.
    await expect(b.getByRole("link", { name: "Activity" }).count()).resolves.toBe(0);
    await expect(b.getByRole("complementary", { name: "Projects" }).getByRole("link", { name: projectName }).count()).resolves.toBe(1);
    await screenshot(b, "accounts-invitee-project");

    // The owner now sees them as an editor, and the join in the activity log.
    await gotoHydrated(a, new URL(a.url()).pathname);
    await expect(a.getByTestId(`member-${tobiasEmail}`).getByRole("combobox").inputValue()).resolves.toBe("editor");
    await a.getByRole("link", { name: "Activity" }).click();
    await a.getByText("joined as editor").waitFor();
    await screenshot(a, "accounts-activity");

    expect(maren.requests.filter((r) => !isLocal(r))).toEqual([]);
    expect(tobias.requests.filter((r) => !isLocal(r))).toEqual([]);
  });
});
