// Local stand-ins for object storage and the mail relay, used only when S3_ENDPOINT / SMTP_URL are unset.
// Every message the SMTP fake receives is stored as JSON under <FAKES_DIR>/mail for the outbox page and tests.
import { mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { CreateBucketCommand, HeadBucketCommand, S3Client } from "@aws-sdk/client-s3";
import { simpleParser } from "mailparser";
import S3rver from "s3rver";
import { SMTPServer } from "smtp-server";

const dir = process.env.FAKES_DIR ?? ".data/fakes";
const run = process.env.FAKES_RUN ?? "s3 smtp";
const s3Port = Number(process.env.FAKES_S3_PORT ?? 4569);
const smtpPort = Number(process.env.FAKES_SMTP_PORT ?? 2525);
const bucketName = process.env.S3_BUCKET ?? "tracewell";

const closers: Array<() => Promise<void>> = [];

if (run.includes("s3")) {
  const s3dir = join(dir, "s3");
  mkdirSync(s3dir, { recursive: true });
  const server = new S3rver({ address: "127.0.0.1", port: s3Port, directory: s3dir, silent: true });
  await server.run();
  closers.push(() => server.close());
  const client = new S3Client({
    endpoint: `http://127.0.0.1:${s3Port}`,
    region: "us-east-1",
    forcePathStyle: true,
    credentials: { accessKeyId: "S3RVER", secretAccessKey: "S3RVER" },
  });
  try {
    await client.send(new HeadBucketCommand({ Bucket: bucketName }));
  } catch {
    await client.send(new CreateBucketCommand({ Bucket: bucketName }));
  }
  console.log(`S3 fake on http://127.0.0.1:${s3Port}, bucket ${bucketName}`);
}

if (run.includes("smtp")) {
  const mailDir = join(dir, "mail");
  mkdirSync(mailDir, { recursive: true });
  let counter = 0;
  const smtp = new SMTPServer({
    authOptional: true,
    disabledCommands: ["STARTTLS"],
    logger: false,
    onData(stream, _session, callback) {
      simpleParser(stream).then(
        (m) => {
          const id = `${Date.now()}-${String(counter++).padStart(4, "0")}`;
          const to = Array.isArray(m.to) ? m.to.map((a) => a.text).join(", ") : (m.to?.text ?? "");
          const record = { id, receivedAt: new Date().toISOString(), from: m.from?.text ?? "", to, subject: m.subject ?? "", text: m.text ?? "", html: typeof m.html === "string" ? m.html : "" };
          writeFileSync(join(mailDir, `${id}.json`), JSON.stringify(record, null, 2));
          callback();
        },
        (err: Error) => callback(err),
      );
    },
  });
  await new Promise<void>((resolve) => smtp.listen(smtpPort, "127.0.0.1", resolve));
  closers.push(() => new Promise<void>((resolve) => smtp.close(() => resolve())));
  console.log(`SMTP fake on smtp://127.0.0.1:${smtpPort}, messages in ${mailDir}`);
}

async function shutdown() {
  // Closing waits for open keep-alive connections; never let that keep the fakes alive after Ctrl-C.
  setTimeout(() => process.exit(0), 2000).unref();
  await Promise.allSettled(closers.map((c) => c()));
  process.exit(0);
}
process.on("SIGINT", shutdown);
process.on("SIGTERM", shutdown);
