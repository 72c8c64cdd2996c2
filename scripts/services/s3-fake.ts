/** The local S3-compatible store (s3rver) for uploads, bound to loopback, files under the data folder. */
import S3rver from 's3rver';

const port = Number(process.env.S3_PORT ?? 4569);
const host = process.env.BIND_HOST ?? '127.0.0.1';
const directory = process.env.S3_DIR;
const bucket = process.env.S3_BUCKET ?? 'beamwarden-uploads';
if (!directory) throw new Error('S3_DIR is not set');

const server = new S3rver({
  port,
  address: host,
  directory,
  silent: true,
  configureBuckets: [{ name: bucket, configs: [] }],
});
await server.run();
console.log(`storage fake listening on http://${host}:${port} (bucket ${bucket})`);
