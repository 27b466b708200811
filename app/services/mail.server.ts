import nodemailer, { type Transporter } from "nodemailer";
import { getEnv } from "./env.server";

let transport: Transporter | undefined;

function mailer(): Transporter {
  if (!transport) {
    const url = new URL(getEnv().SMTP_URL);
    const local = url.hostname === "127.0.0.1" || url.hostname === "localhost";
    transport = nodemailer.createTransport({
      host: url.hostname,
      port: Number(url.port || (url.protocol === "smtps:" ? 465 : 587)),
      secure: url.protocol === "smtps:",
      // The loopback fake speaks plain SMTP; a real relay negotiates TLS as usual.
      ignoreTLS: local,
      auth: url.username ? { user: decodeURIComponent(url.username), pass: decodeURIComponent(url.password) } : undefined,
    });
  }
  return transport;
}

export type Mail = { to: string; subject: string; text: string; html?: string };

export async function sendMail(mail: Mail): Promise<void> {
  await mailer().sendMail({ from: getEnv().MAIL_FROM, ...mail });
}

export async function mailReachable(): Promise<boolean> {
  try {
    await mailer().verify();
    return true;
  } catch {
    return false;
  }
}
