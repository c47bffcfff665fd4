// Follows MQTT packet boundaries in a connection's bytes, reading only each fixed header (3.1.1
// §2.2: one type byte, then the remaining length in 1–4 bytes of 7 bits) and skipping the rest,
// so a packet announced larger than the limit is caught from its first bytes, before any of its
// body is held. Pure: the broker feeds it what it reads.

export class PacketSizeGuard {
  /** Body bytes of the current packet still to come. */
  private skip = 0;
  private inLength = false;
  private length = 0;
  private lengthBytes = 0;

  /** `maxRemaining`: the largest remaining length (bytes after the fixed header) let through. */
  constructor(private readonly maxRemaining: number) {}

  /** Null while every packet fits, else why the connection must close. */
  feed(chunk: Uint8Array): string | null {
    let i = 0;
    while (i < chunk.length) {
      if (this.skip > 0) {
        const n = Math.min(this.skip, chunk.length - i);
        this.skip -= n;
        i += n;
        continue;
      }
      const byte = chunk[i++]!;
      if (!this.inLength) {
        // The type byte; its length follows.
        this.inLength = true;
        this.length = 0;
        this.lengthBytes = 0;
        continue;
      }
      this.length += (byte & 0x7f) * 128 ** this.lengthBytes;
      this.lengthBytes += 1;
      if (this.length > this.maxRemaining) return `packet of ${this.length} bytes or more is over the ${this.maxRemaining}-byte limit`;
      if (byte & 0x80) {
        if (this.lengthBytes === 4) return 'malformed packet length';
        continue;
      }
      this.inLength = false;
      this.skip = this.length;
    }
    return null;
  }
}
