/**
 * The outbox's message parser against messages built by nodemailer's own MIME composer (a
 * general-purpose reference): quoted-printable and base64 bodies, RFC 2047 encoded subjects,
 * multipart/alternative with a text part.
 */
import MailComposer from "nodemailer/lib/mail-composer";
import { describe, expect, it } from "vitest";
import { parseRawMessage } from "@/server/mail/parse";

function compose(opts: ConstructorParameters<typeof MailComposer>[0]): Promise<string> {
  return new Promise((resolve, reject) => {
    new MailComposer(opts).compile().build((err, buf) => (err ? reject(err) : resolve(buf.toString("utf8"))));
  });
}

describe("outbox message parser", () => {
  it.each([
    ["quoted-printable", "quoted-printable"],
    ["base64", "base64"],
  ] as const)("decodes a %s text body with non-ASCII characters", async (_n, enc) => {
    const text = "Decay ratio 0.52 ≥ 0.50, ζ 0.10 — loop FIC-101 (Süd-Halle).\nSecond line.";
    const raw = await compose({ from: "a@x.example", to: "b@x.example", subject: "Alarm ζ ≥ level", text, textEncoding: enc });
    const p = parseRawMessage(raw);
    expect(p.text).toBe(text);
    expect(p.headers["subject"]).toBe("Alarm ζ ≥ level");
  });

  it("takes the text/plain part of a multipart message and keeps custom headers", async () => {
    const raw = await compose({
      from: "a@x.example",
      to: "b@x.example",
      subject: "plain subject",
      text: "the text part",
      html: "<p>the html part</p>",
      headers: { "X-Rimguard-Tenant": "7" },
    });
    const p = parseRawMessage(raw);
    expect(p.text).toBe("the text part");
    expect(p.headers["x-rimguard-tenant"]).toBe("7");
  });
});
