// The e-mails the accounts feature sends. Links are built from APP_URL, the address people reach the app at.
import { ROLE_DESCRIPTIONS, type Role } from "~/lib/roles";
import { INVITATION_DAYS } from "~/models/invitation.server";
import { RESET_MINUTES } from "~/models/password-reset.server";
import { getEnv } from "./env.server";
import { sendMail } from "./mail.server";

function link(path: string): string {
  return new URL(path, getEnv().APP_URL).toString();
}

export async function sendInvitationMail(input: { to: string; token: string; projectName: string; role: Role; inviterName: string }): Promise<void> {
  const url = link(`/invitations/${input.token}`);
  const role = ROLE_DESCRIPTIONS[input.role];
  await sendMail({
    to: input.to,
    subject: `${input.inviterName} invited you to "${input.projectName}" on Tracewell`,
    text: [
      `${input.inviterName} invited you to join the project "${input.projectName}" as ${role.label.toLowerCase()}.`,
      "",
      `${role.label}: ${role.summary}`,
      "",
      `Accept the invitation: ${url}`,
      "",
      `If you have no Tracewell account yet, that page lets you create one with this address.`,
      `The link works once and expires in ${INVITATION_DAYS} days. If you did not expect it, ignore this message.`,
    ].join("\n"),
  });
}

export async function sendPasswordResetMail(input: { to: string; name: string; token: string }): Promise<void> {
  const url = link(`/reset-password/${input.token}`);
  await sendMail({
    to: input.to,
    subject: "Reset your Tracewell password",
    text: [
      `Hello ${input.name},`,
      "",
      `Someone asked to reset the password of the Tracewell account for ${input.to}. To choose a new password, open:`,
      "",
      url,
      "",
      `The link works once and expires in ${RESET_MINUTES} minutes. Setting a new password signs the account out everywhere else.`,
      "If you did not ask for this, ignore this message: your password stays as it is.",
    ].join("\n"),
  });
}
