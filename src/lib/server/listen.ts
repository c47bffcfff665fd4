import type { Server } from 'node:net';

/** Starts listening and resolves with the port actually bound (port 0 picks a free one). */
export async function listen(server: Server, port: number, host: string): Promise<number> {
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(port, host, () => resolve());
  });
  const addr = server.address();
  return typeof addr === 'object' && addr ? addr.port : port;
}
