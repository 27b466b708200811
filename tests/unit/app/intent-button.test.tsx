// @vitest-environment jsdom
// A row's one-button form posts its intent and hidden ids to the page's own action.
import { cleanup, fireEvent, render, screen, waitFor } from "@testing-library/react";
import { createRoutesStub } from "react-router";
import { afterEach, describe, expect, it } from "vitest";
import { IntentButton } from "~/components/ui";

afterEach(cleanup);

describe("IntentButton", () => {
  it("submits intent and fields as form data to the route action", async () => {
    let received: Record<string, FormDataEntryValue> | null = null;
    const Stub = createRoutesStub([
      {
        path: "/",
        Component: () => (
          <IntentButton intent="revoke-token" fields={{ tokenId: "tok_1" }} tone="danger" aria-label="Revoke nightly">
            Revoke
          </IntentButton>
        ),
        action: async ({ request }) => {
          received = Object.fromEntries(await request.formData());
          return null;
        },
      },
    ]);
    render(<Stub initialEntries={["/"]} />);
    const button = screen.getByRole("button", { name: "Revoke nightly" });
    expect(button.getAttribute("type")).toBe("submit");
    fireEvent.click(button);
    await waitFor(() => expect(received).toEqual({ intent: "revoke-token", tokenId: "tok_1" }));
  });
});
