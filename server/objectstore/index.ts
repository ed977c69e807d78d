/**
 * Object storage for uploaded step-test files, through the S3 API (`@aws-sdk/client-s3`).
 * With no S3_ENDPOINT configured, an S3 stand-in (npm `s3rver`) runs in-process on 127.0.0.1
 * with its files under `.data/objectstore` (with port 0, a temporary directory removed on stop); with
 * S3_ENDPOINT set, the same client talks to that endpoint (credentials from the usual AWS
 * environment variables). Route handlers reach it through lib/step-tests/store.ts.
 *
 * Client settings for s3rver (docs/architecture.md §11): path-style addressing, and checksums
 * only when an operation requires them (current SDKs otherwise send CRC headers s3rver rejects).
 */
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import {
  CreateBucketCommand,
  DeleteObjectCommand,
  GetObjectCommand,
  HeadBucketCommand,
  PutObjectCommand,
  S3Client,
} from "@aws-sdk/client-s3";
import S3rver from "s3rver";
import type { ObjectStore } from "@/lib/step-tests/store";
import type { ServerContext, Service, ServiceHealth } from "@/server/context";

export const OBJECT_STORE_SERVICE = "objectstore";

export interface ObjectStoreService extends Service, ObjectStore {
  readonly client: S3Client;
  readonly bucket: string;
  /** The endpoint in use (the embedded stand-in's loopback URL or S3_ENDPOINT). */
  readonly endpoint: string;
  /** Port of the embedded stand-in, null with an external endpoint. */
  readonly port: number | null;
  /** Data directory of the embedded stand-in, null with an external endpoint. */
  readonly directory: string | null;
}

export interface StartObjectStoreOptions {
  /** Data directory of the embedded stand-in (default `.data/objectstore`). */
  directory?: string;
  /** Port of the embedded stand-in (default config S3_PORT; 0 = any free port). */
  port?: number;
  /** An external S3 endpoint (default config S3_ENDPOINT). */
  endpoint?: string;
  bucket?: string;
}

export async function startObjectStore(ctx: ServerContext, opts: StartObjectStoreOptions = {}): Promise<ObjectStoreService> {
  const bucket = opts.bucket ?? ctx.config.S3_BUCKET;
  const external = opts.endpoint ?? ctx.config.S3_ENDPOINT;
  let fake: S3rver | null = null;
  let endpoint: string;
  let port: number | null = null;
  let tempDir: string | null = null;
  let directory: string | null = null;
  if (external) {
    endpoint = external;
  } else {
    const wantPort = opts.port ?? ctx.config.S3_PORT;
    // Port 0 asks for a throw-away instance (tests): a temporary directory, removed on stop.
    if (!opts.directory && wantPort === 0) tempDir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-objectstore-"));
    directory = path.resolve(opts.directory ?? tempDir ?? path.join(".data", "objectstore"));
    fs.mkdirSync(directory, { recursive: true });
    fake = new S3rver({ address: "127.0.0.1", port: wantPort, silent: true, directory, vhostBuckets: false, configureBuckets: [{ name: bucket }] });
    const addr = await fake.run();
    port = addr.port;
    endpoint = `http://127.0.0.1:${port}`;
  }
  const client = new S3Client({
    endpoint,
    region: process.env.AWS_REGION ?? "us-east-1",
    forcePathStyle: true,
    requestChecksumCalculation: "WHEN_REQUIRED",
    responseChecksumValidation: "WHEN_REQUIRED",
    // The stand-in accepts its documented fixed key; a real endpoint uses the AWS environment.
    ...(fake ? { credentials: { accessKeyId: "S3RVER", secretAccessKey: "S3RVER" } } : {}),
  });
  try {
    if (!fake) {
      try {
        await client.send(new HeadBucketCommand({ Bucket: bucket }));
      } catch {
        await client.send(new CreateBucketCommand({ Bucket: bucket }));
      }
    }
  } catch (e) {
    client.destroy();
    await fake?.close().catch(() => {});
    if (tempDir) fs.rmSync(tempDir, { recursive: true, force: true });
    throw e;
  }
  let puts = 0;
  let gets = 0;
  let failures = 0;
  let lastError: string | null = null;
  const track = async <T>(fn: () => Promise<T>): Promise<T> => {
    try {
      return await fn();
    } catch (e) {
      failures++;
      lastError = e instanceof Error ? e.message : String(e);
      throw e;
    }
  };

  const service: ObjectStoreService = {
    name: OBJECT_STORE_SERVICE,
    client,
    bucket,
    endpoint,
    port,
    directory,
    async put(key, body, contentType) {
      await track(() => client.send(new PutObjectCommand({ Bucket: bucket, Key: key, Body: body, ContentType: contentType, ContentLength: body.byteLength })));
      puts++;
    },
    async get(key) {
      const res = await track(() => client.send(new GetObjectCommand({ Bucket: bucket, Key: key })));
      gets++;
      if (!res.Body) return null;
      return Buffer.from(await res.Body.transformToByteArray());
    },
    async delete(key) {
      await track(() => client.send(new DeleteObjectCommand({ Bucket: bucket, Key: key })));
    },
    health(): ServiceHealth {
      return { status: failures > 0 && lastError ? "degraded" : "ok", detail: { endpoint: fake ? "embedded" : endpoint, bucket, puts, gets, failures, lastError } };
    },
    async stop() {
      client.destroy();
      if (fake) await fake.close();
      if (tempDir) fs.rmSync(tempDir, { recursive: true, force: true });
    },
  };
  return service;
}
