/**
 * MQTT over TLS (mqtts) for the embedded broker, on its own port beside the plain listener.
 * `MQTT_TLS`: `off` (no TLS listener), `on` (TLS on MQTTS_HOST:MQTTS_PORT, plain TCP on
 * MQTT_HOST:MQTT_PORT as well, loopback by default) or `required` (TLS only: no plain listener,
 * so a gateway that does not speak TLS is refused). Unset means `on`, except in tests (`off`).
 * The certificate and key come from MQTT_TLS_CERT / MQTT_TLS_KEY (PEM files); without them the
 * demo makes a self-signed pair under `.data/mqtt-tls/` on first start (openssl) and prints the
 * certificate's SHA-256 fingerprint, which a gateway pins or an operator compares.
 */
import { execFileSync } from "node:child_process";
import { X509Certificate } from "node:crypto";
import fs from "node:fs";
import type net from "node:net";
import path from "node:path";
import tls from "node:tls";
import type { Config as AppConfig } from "@/lib/config";

export type TlsMode = "off" | "on" | "required";

export interface TlsListenerOptions {
  mode: TlsMode;
  host: string;
  /** 0 = any free port (tests). */
  port: number;
  cert: Buffer;
  key: Buffer;
}

/** The TLS mode the configuration asks for. */
export function tlsModeOf(cfg: Pick<AppConfig, "MQTT_TLS" | "NODE_ENV">): TlsMode {
  return cfg.MQTT_TLS ?? (cfg.NODE_ENV === "test" ? "off" : "on");
}

/** Where the demo's self-signed pair lives under a directory. */
export function selfSignedPairPaths(dir: string): { certPath: string; keyPath: string } {
  return { certPath: path.join(dir, "broker-cert.pem"), keyPath: path.join(dir, "broker-key.pem") };
}

/** The PEM certificate the broker presents for mqtts: MQTT_TLS_CERT, else the demo pair's (what a local client trusts). */
export function brokerCertificatePath(cfg: Pick<AppConfig, "MQTT_TLS_CERT" | "MQTT_TLS_DIR">): string {
  return cfg.MQTT_TLS_CERT ?? selfSignedPairPaths(path.join(cfg.MQTT_TLS_DIR, "mqtt-tls")).certPath;
}

/**
 * A self-signed certificate for the demo broker in `dir` (made once, kept): CN and subject
 * alternative names localhost and 127.0.0.1, ECDSA P-256, about two years. Returns the PEM paths.
 */
export function ensureSelfSignedPair(dir: string): { certPath: string; keyPath: string; created: boolean } {
  const { certPath, keyPath } = selfSignedPairPaths(dir);
  if (fs.existsSync(certPath) && fs.existsSync(keyPath)) return { certPath, keyPath, created: false };
  fs.mkdirSync(dir, { recursive: true, mode: 0o700 });
  execFileSync(
    "openssl",
    ["req", "-x509", "-newkey", "ec", "-pkeyopt", "ec_paramgen_curve:prime256v1", "-nodes", "-days", "825", "-subj", "/CN=rimguard-demo-broker",
      "-addext", "subjectAltName=DNS:localhost,IP:127.0.0.1", "-keyout", keyPath, "-out", certPath],
    { stdio: ["ignore", "ignore", "pipe"] },
  );
  fs.chmodSync(keyPath, 0o600);
  return { certPath, keyPath, created: true };
}

/** SHA-256 fingerprint of a PEM certificate (AA:BB:...). */
export function certificateFingerprint(certPem: Buffer | string): string {
  return new X509Certificate(certPem).fingerprint256;
}

/** The TLS listener settings from the configuration, making the demo pair when none is configured; null when off. */
export function tlsListenerFromConfig(cfg: AppConfig, dataDir: string): TlsListenerOptions | null {
  const mode = tlsModeOf(cfg);
  if (mode === "off") return null;
  let certPath = cfg.MQTT_TLS_CERT;
  let keyPath = cfg.MQTT_TLS_KEY;
  if (!certPath || !keyPath) {
    if (certPath || keyPath) throw new Error("MQTT_TLS_CERT and MQTT_TLS_KEY must be set together.");
    const pair = ensureSelfSignedPair(path.join(dataDir, "mqtt-tls"));
    ({ certPath, keyPath } = pair);
    const fp = certificateFingerprint(fs.readFileSync(certPath));
    console.info(`[broker] ${pair.created ? "made a" : "using the"} self-signed demo certificate for mqtts: SHA-256 ${fp}`);
  }
  return { mode, host: cfg.MQTTS_HOST ?? cfg.MQTT_HOST, port: cfg.MQTTS_PORT, cert: fs.readFileSync(certPath), key: fs.readFileSync(keyPath) };
}

/** Listen for mqtts and hand each decrypted socket to the broker's connection handler. */
export async function listenTls(opts: TlsListenerOptions, onSocket: (socket: net.Socket) => void): Promise<tls.Server> {
  const server = tls.createServer({ cert: opts.cert, key: opts.key, minVersion: "TLSv1.2", handshakeTimeout: 10_000 }, onSocket);
  // a client that fails the handshake (plain MQTT, a wrong protocol) is dropped; nothing to count
  server.on("tlsClientError", (_err, socket) => socket.destroy());
  await new Promise<void>((resolve, reject) => {
    server.once("error", reject);
    server.listen(opts.port, opts.host, () => {
      server.off("error", reject);
      resolve();
    });
  });
  return server;
}
