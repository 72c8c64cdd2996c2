/**
 * Object storage (S3 API; the local fake is s3rver). Uploaded files — safety data sheets now, fault photos
 * later — go through putObject/getObject here. The bucket is created on first use if it is missing.
 */
import { CreateBucketCommand, GetObjectCommand, HeadBucketCommand, PutObjectCommand, S3Client } from '@aws-sdk/client-s3';
import { env } from './env';
import { DomainError } from './errors';
import { log } from './log';

let client: S3Client | undefined;
let bucketReady: Promise<void> | undefined;

function s3(): S3Client {
  client ??= new S3Client({
    endpoint: env().S3_ENDPOINT,
    region: env().S3_REGION,
    forcePathStyle: env().S3_FORCE_PATH_STYLE,
    credentials: { accessKeyId: env().S3_ACCESS_KEY_ID, secretAccessKey: env().S3_SECRET_ACCESS_KEY },
  });
  return client;
}

/** Creates the bucket when it does not exist yet (once per process). */
export function ensureBucket(): Promise<void> {
  bucketReady ??= (async () => {
    const Bucket = env().S3_BUCKET;
    try {
      await s3().send(new HeadBucketCommand({ Bucket }));
    } catch {
      try {
        await s3().send(new CreateBucketCommand({ Bucket }));
      } catch (err) {
        const name = (err as { name?: string }).name;
        if (name !== 'BucketAlreadyOwnedByYou' && name !== 'BucketAlreadyExists') throw err;
      }
    }
  })().catch((err) => {
    bucketReady = undefined;
    throw err;
  });
  return bucketReady;
}

export async function putObject(key: string, bytes: Uint8Array, contentType: string): Promise<void> {
  await unavailableAs503(async () => {
    await ensureBucket();
    await s3().send(new PutObjectCommand({ Bucket: env().S3_BUCKET, Key: key, Body: bytes, ContentType: contentType, ContentLength: bytes.byteLength }));
  });
}

/**
 * Storage that does not answer (connection refused, time-out, a 5xx) becomes a clear 503 for the caller,
 * thrown before anything is written to the database, instead of an unexplained 500.
 */
async function unavailableAs503<T>(fn: () => Promise<T>): Promise<T> {
  try {
    return await fn();
  } catch (err) {
    const e = err as { name?: string; code?: string; $metadata?: { httpStatusCode?: number }; cause?: { code?: string } };
    const status = e.$metadata?.httpStatusCode;
    const network = ['ECONNREFUSED', 'ECONNRESET', 'ETIMEDOUT', 'EHOSTUNREACH', 'ENOTFOUND', 'EPIPE'].includes(e.code ?? e.cause?.code ?? '');
    if (network || e.name === 'TimeoutError' || (status !== undefined && status >= 500) || (status === undefined && !e.name?.startsWith('NoSuch'))) {
      log.warn({ event: 'provider_call', provider: 'storage', outcome: 'unavailable', code: e.code ?? e.name }, 'storage unavailable');
      throw new DomainError('unavailable', 'storage_unavailable', 'File storage is not answering just now, so nothing was saved. Try again in a few minutes.', undefined, { retryAfterSeconds: 60 });
    }
    throw err;
  }
}

/** The stored bytes and their content type, or null when there is no such object. */
export async function getObject(key: string): Promise<{ bytes: Uint8Array; contentType: string } | null> {
  await unavailableAs503(ensureBucket);
  try {
    const out = await s3().send(new GetObjectCommand({ Bucket: env().S3_BUCKET, Key: key }));
    if (!out.Body) return null;
    return { bytes: await out.Body.transformToByteArray(), contentType: out.ContentType ?? 'application/octet-stream' };
  } catch (err) {
    const name = (err as { name?: string }).name;
    if (name === 'NoSuchKey' || name === 'NotFound') return null;
    throw err;
  }
}
