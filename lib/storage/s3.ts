import 'server-only';
import type { Readable } from 'node:stream';
import { DeleteObjectCommand, GetObjectCommand, HeadObjectCommand, ListObjectsV2Command, NoSuchKey, PutObjectCommand, S3Client } from '@aws-sdk/client-s3';
import { env } from '@/lib/env';
import { makeBytesKeeper } from '@/lib/kept-recently';

/**
 * Object storage for films: one bucket (S3_BUCKET) on an S3-compatible endpoint (S3_URL), path-style
 * addressing (the local fake and most self-hosted stores need it). The client is made once per
 * process. Keys are chosen by lib/services/films.ts; nothing else writes to the bucket.
 */
const g = globalThis as unknown as { __laminaS3?: S3Client };

export function s3(): S3Client {
  return (g.__laminaS3 ??= new S3Client({
    endpoint: env.S3_URL,
    forcePathStyle: true,
    region: env.S3_REGION,
    credentials: { accessKeyId: env.S3_ACCESS_KEY_ID, secretAccessKey: env.S3_SECRET_ACCESS_KEY },
    maxAttempts: 3,
  }));
}

export interface StoredObject {
  key: string;
  body: Uint8Array;
  contentType: string;
}

/** Writes one object. */
export async function putObject(o: StoredObject): Promise<void> {
  await s3().send(new PutObjectCommand({ Bucket: env.S3_BUCKET, Key: o.key, Body: o.body, ContentType: o.contentType, ContentLength: o.body.byteLength }));
}

/** Reads one object whole; null when there is no such key. */
export async function getObject(key: string): Promise<Uint8Array | null> {
  try {
    const r = await s3().send(new GetObjectCommand({ Bucket: env.S3_BUCKET, Key: key }));
    if (!r.Body) return null;
    return await r.Body.transformToByteArray();
  } catch (e) {
    if (e instanceof NoSuchKey || (e as { name?: string }).name === 'NoSuchKey') return null;
    throw e;
  }
}

/**
 * The film's small renditions (thumbnail, web), kept in this process once read: a film's objects sit
 * under its own fresh id (lib/services/films.ts, storeFilmObjects) and are never written again, so a
 * kept copy cannot go stale. Who may see them is asked of the database on every request, before this
 * (a removed film's row is gone or archived first). At most 32 MB in all, 1 MB each; the least
 * recently used go. Under load a thumbnail then costs its row and its audit event, not a signed
 * request to the store (issue 15, `npm run bench -- load`).
 */
const renditions = makeBytesKeeper(32 * 1024 * 1024, 1024 * 1024);

/** Reads a never-rewritten object (a film's rendition) from this process's copy, else from the store (getObject). */
export async function getUnchangingObject(key: string): Promise<Uint8Array | null> {
  const kept = renditions.get(key);
  if (kept) return kept;
  const body = await getObject(key);
  if (body) renditions.put(key, body);
  return body;
}

/** Removes the objects (missing keys are no error). */
export async function deleteObjects(keys: readonly string[]): Promise<void> {
  if (keys.length === 0) return;
  for (const key of keys) renditions.forget(key);
  // One request per key: the multi-object delete needs a body checksum the local fake does not take.
  await Promise.all(keys.map((Key) => s3().send(new DeleteObjectCommand({ Bucket: env.S3_BUCKET, Key }))));
}

/**
 * Streams one object to storage as it is written (multipart above 5 MB, @aws-sdk/lib-storage), so
 * memory stays flat with the object's size. The same key again replaces the object. `signal` aborts
 * the upload (no object is left by an aborted multipart upload; a caller removes a finished one).
 */
export async function uploadStream(key: string, body: Readable, contentType: string, signal?: AbortSignal): Promise<void> {
  const { Upload } = await import('@aws-sdk/lib-storage');
  const upload = new Upload({ client: s3(), params: { Bucket: env.S3_BUCKET, Key: key, Body: body, ContentType: contentType }, queueSize: 2, partSize: 5 * 1024 * 1024, leavePartsOnError: false });
  const onAbort = () => void upload.abort().catch(() => undefined);
  signal?.addEventListener('abort', onAbort, { once: true });
  try {
    await upload.done();
  } finally {
    signal?.removeEventListener('abort', onAbort);
  }
}

/** One object as a stream with its size; null when there is no such key. */
export async function getObjectStream(key: string): Promise<{ body: ReadableStream; size: number | null } | null> {
  try {
    const r = await s3().send(new GetObjectCommand({ Bucket: env.S3_BUCKET, Key: key }));
    if (!r.Body) return null;
    return { body: r.Body.transformToWebStream(), size: r.ContentLength ?? null };
  } catch (e) {
    if (e instanceof NoSuchKey || (e as { name?: string }).name === 'NoSuchKey') return null;
    throw e;
  }
}

/** Whether an object exists (and its size). */
export async function headObject(key: string): Promise<{ size: number } | null> {
  try {
    const r = await s3().send(new HeadObjectCommand({ Bucket: env.S3_BUCKET, Key: key }));
    return { size: r.ContentLength ?? 0 };
  } catch (e) {
    const name = (e as { name?: string }).name;
    if (name === 'NotFound' || name === 'NoSuchKey' || (e as { $metadata?: { httpStatusCode?: number } }).$metadata?.httpStatusCode === 404) return null;
    throw e;
  }
}

/** One object of a listing: its key and when it was last written (the store's clock, whole seconds on some stores). */
export interface ListedObject {
  key: string;
  lastModified: Date;
}

/** Every object under a prefix, a page (at most 1,000) at a time; an error of the store is thrown, never taken for an empty listing. */
export async function* listObjects(prefix: string): AsyncGenerator<ListedObject[]> {
  let token: string | undefined;
  do {
    const r = await s3().send(new ListObjectsV2Command({ Bucket: env.S3_BUCKET, Prefix: prefix, ContinuationToken: token, MaxKeys: 1000 }));
    yield (r.Contents ?? []).flatMap((o) => (o.Key && o.LastModified ? [{ key: o.Key, lastModified: o.LastModified }] : []));
    token = r.IsTruncated ? r.NextContinuationToken : undefined;
  } while (token);
}
