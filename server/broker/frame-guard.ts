/**
 * Watches the MQTT fixed headers on a connection's byte stream (MQTT 3.1.1 §2.2: one type byte,
 * then the Remaining Length in 1-4 bytes of 7 bits each) and reports a packet whose Remaining
 * Length exceeds the limit as soon as its header arrives, before its body is buffered. The
 * caller then closes the connection (MQTT 3.1.1 has no way to refuse one PUBLISH; MQTT 5 §3.1.2.11
 * says the same for a packet above the Maximum Packet Size).
 */
export class FrameGuard {
  /** 0: expecting a type byte; 1: reading Remaining Length; 2: skipping a body. */
  private state = 0;
  private length = 0;
  private multiplier = 1;
  private lengthBytes = 0;
  private toSkip = 0;
  private failed = false;

  constructor(
    private readonly maxRemainingLength: number,
    private readonly onViolation: (why: "too-large" | "malformed", remainingLength: number) => void,
  ) {}

  /** Feed the next chunk; returns false once a violation was reported (ignore further data). */
  push(chunk: Buffer): boolean {
    if (this.failed) return false;
    let i = 0;
    const n = chunk.length;
    while (i < n) {
      if (this.state === 2) {
        const take = Math.min(this.toSkip, n - i);
        this.toSkip -= take;
        i += take;
        if (this.toSkip === 0) this.state = 0;
        continue;
      }
      if (this.state === 0) {
        i++; // type and flags: checked by the MQTT parser itself
        this.state = 1;
        this.length = 0;
        this.multiplier = 1;
        this.lengthBytes = 0;
        continue;
      }
      const byte = chunk[i++]!;
      this.length += (byte & 0x7f) * this.multiplier;
      this.multiplier *= 128;
      this.lengthBytes++;
      if (byte & 0x80) {
        if (this.lengthBytes >= 4) return this.fail("malformed", this.length);
        continue;
      }
      if (this.length > this.maxRemainingLength) return this.fail("too-large", this.length);
      if (this.length === 0) this.state = 0;
      else {
        this.state = 2;
        this.toSkip = this.length;
      }
    }
    return true;
  }

  private fail(why: "too-large" | "malformed", len: number): false {
    this.failed = true;
    this.onViolation(why, len);
    return false;
  }
}
