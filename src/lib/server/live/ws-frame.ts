// WebSocket text frames built once per hub frame and written as they are to every client's socket.
// Through ws, each client cost a frame header, a cork and a write per message; the bytes are the
// same for every client of a bench, so the hub frames them once (RFC 6455 §5.2: FIN + text opcode,
// 7-, 16- or 64-bit length, no mask from a server, no extensions: the hub's server negotiates none).
// Pure.

/** The messages as consecutive unfragmented text frames, in one Buffer. */
export function textFrames(payloads: readonly Buffer[]): Buffer {
  let size = 0;
  for (const p of payloads) size += headerLength(p.length) + p.length;
  const out = Buffer.allocUnsafe(size);
  let at = 0;
  for (const p of payloads) {
    out[at++] = 0x81; // FIN, opcode 1 (text)
    if (p.length < 126) {
      out[at++] = p.length;
    } else if (p.length < 0x10000) {
      out[at++] = 126;
      out.writeUInt16BE(p.length, at);
      at += 2;
    } else {
      out[at++] = 127;
      out.writeBigUInt64BE(BigInt(p.length), at);
      at += 8;
    }
    at += p.copy(out, at);
  }
  return out;
}

function headerLength(n: number): number {
  return n < 126 ? 2 : n < 0x10000 ? 4 : 10;
}
