// Object storage for binary data (render buffers, assets, partial accumulations).
// The same code talks to the local fake and to any S3-compatible store.
import type { Readable } from "node:stream";
import {
  AbortMultipartUploadCommand,
  CopyObjectCommand,
  CreateBucketCommand,
  DeleteObjectCommand,
  GetObjectCommand,
  HeadBucketCommand,
  HeadObjectCommand,
  ListObjectsV2Command,
  PutObjectCommand,
  S3Client,
} from "@aws-sdk/client-s3";
import { Upload } from "@aws-sdk/lib-storage";
import { getSignedUrl } from "@aws-sdk/s3-request-presigner";
import { getEnv } from "./env.server";

let client: S3Client | undefined;

export function s3(): S3Client {
  if (!client) {
    const env = getEnv();
    client = new S3Client({
      endpoint: env.S3_ENDPOINT,
      region: env.S3_REGION,
      forcePathStyle: env.S3_FORCE_PATH_STYLE,
      credentials: { accessKeyId: env.S3_ACCESS_KEY_ID, secretAccessKey: env.S3_SECRET_ACCESS_KEY },
      // Streamed bodies are otherwise sent aws-chunked, which some S3-compatible stores store verbatim.
      requestChecksumCalculation: "WHEN_REQUIRED",
      responseChecksumValidation: "WHEN_REQUIRED",
      maxAttempts: 2,
    });
  }
  return client;
}

export function bucket(): string {
  return getEnv().S3_BUCKET;
}

export async function ensureBucket(): Promise<void> {
  try {
    await s3().send(new HeadBucketCommand({ Bucket: bucket() }));
  } catch {
    await s3().send(new CreateBucketCommand({ Bucket: bucket() }));
  }
}

export async function putObject(key: string, body: Uint8Array | string, contentType = "application/octet-stream") {
  await s3().send(new PutObjectCommand({ Bucket: bucket(), Key: key, Body: body, ContentType: contentType }));
}

export async function getObjectBytes(key: string): Promise<Uint8Array> {
  const res = await s3().send(new GetObjectCommand({ Bucket: bucket(), Key: key }));
  if (!res.Body) throw new Error(`object ${key} has no body`);
  return res.Body.transformToByteArray();
}

export async function objectExists(key: string): Promise<boolean> {
  try {
    await s3().send(new HeadObjectCommand({ Bucket: bucket(), Key: key }));
    return true;
  } catch {
    return false;
  }
}

export async function deleteObject(key: string): Promise<void> {
  await s3().send(new DeleteObjectCommand({ Bucket: bucket(), Key: key }));
}

export async function presignUpload(key: string, contentType: string, expiresIn = 900): Promise<string> {
  return getSignedUrl(s3(), new PutObjectCommand({ Bucket: bucket(), Key: key, ContentType: contentType }), { expiresIn });
}

export async function presignDownload(key: string, expiresIn = 300): Promise<string> {
  return getSignedUrl(s3(), new GetObjectCommand({ Bucket: bucket(), Key: key }), { expiresIn });
}

export async function storageReachable(): Promise<boolean> {
  try {
    await s3().send(new HeadBucketCommand({ Bucket: bucket() }));
    return true;
  } catch {
    return false;
  }
}

// ---------------------------------------------------------------------------------------------
// streamed writes (large uploads never sit whole in the server's memory)

/** Parts of a streamed upload: S3's minimum part size. One part is sent while the next fills, so about two
 * parts (plus socket buffers) are in memory whatever the file size; a browser upload is slower than that anyway. */
export const STREAM_PART_BYTES = 5 * 1024 * 1024;
const STREAM_PARTS_IN_FLIGHT = 1;

/**
 * Write a stream to `key` as a multipart upload, so the object appears only once every part is stored: a
 * stream that errors part-way (the sender gone, a byte limit crossed, the store refusing a part) leaves no
 * object behind. Small streams (under one part) go as a single PUT, equally all-or-nothing.
 */
export async function putObjectStream(key: string, body: Readable, contentType = "application/octet-stream"): Promise<void> {
  const upload = new Upload({
    client: s3(),
    params: { Bucket: bucket(), Key: key, Body: body, ContentType: contentType },
    partSize: STREAM_PART_BYTES,
    queueSize: STREAM_PARTS_IN_FLIGHT,
    // Parts are abandoned below instead, so that the reason the stream failed is the error reported
    // (the library would otherwise report a failed abort in its place).
    leavePartsOnError: true,
  });
  try {
    await upload.done();
  } catch (err) {
    if (upload.uploadId) {
      await s3()
        .send(new AbortMultipartUploadCommand({ Bucket: bucket(), Key: key, UploadId: upload.uploadId }))
        .catch((e: unknown) => console.error(`could not abandon the parts of ${key}:`, e instanceof Error ? e.message : e));
    }
    throw err;
  }
}

/** Size of a stored object, or null when there is none. */
export async function objectSize(key: string): Promise<number | null> {
  try {
    const res = await s3().send(new HeadObjectCommand({ Bucket: bucket(), Key: key }));
    return res.ContentLength ?? 0;
  } catch {
    return null;
  }
}

/** Server-side copy: the bytes never pass through this process. */
export async function copyObject(fromKey: string, toKey: string, contentType?: string): Promise<void> {
  await s3().send(
    new CopyObjectCommand({
      Bucket: bucket(),
      Key: toKey,
      CopySource: `${bucket()}/${fromKey.split("/").map(encodeURIComponent).join("/")}`,
      ...(contentType ? { ContentType: contentType, MetadataDirective: "REPLACE" as const } : {}),
    }),
  );
}

/** Keys under a prefix (at most `max`, in key order). */
export async function listKeys(prefix: string, max = 1000): Promise<string[]> {
  const keys: string[] = [];
  let token: string | undefined;
  do {
    const res = await s3().send(new ListObjectsV2Command({ Bucket: bucket(), Prefix: prefix, ContinuationToken: token, MaxKeys: Math.min(1000, max - keys.length) }));
    for (const o of res.Contents ?? []) if (o.Key) keys.push(o.Key);
    token = res.IsTruncated ? res.NextContinuationToken : undefined;
  } while (token && keys.length < max);
  return keys;
}

/** An object's bytes as a stream, for reading large objects piece by piece. */
export async function getObjectStream(key: string): Promise<ReadableStream<Uint8Array>> {
  const res = await s3().send(new GetObjectCommand({ Bucket: bucket(), Key: key }));
  if (!res.Body) throw new Error(`object ${key} has no body`);
  return res.Body.transformToWebStream() as ReadableStream<Uint8Array>;
}
