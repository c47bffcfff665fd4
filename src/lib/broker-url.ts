// Where a gateway reaches the broker, from the server's own broker settings: shared by the gateway
// CLI, the demo's in-process gateways and the admin page that hands a new gateway its token. Pure.

/** Addresses that only the server's own machine can reach. */
const LOOPBACK = new Set(['127.0.0.1', 'localhost', '::1']);
/** Addresses that mean "every interface" to a listener and nothing to a client. */
const WILDCARD = new Set(['0.0.0.0', '::']);

/**
 * The external broker (without the server's credentials) or the embedded one. A broker listening
 * on every interface is reached at `wildcardAs`: loopback for a gateway on this machine, the
 * server's host name for one elsewhere.
 */
export function brokerUrlForGateways(external: string | null, host: string, port: number | null, wildcardAs = '127.0.0.1'): string {
  if (external) {
    const u = new URL(external);
    u.username = '';
    u.password = '';
    return u.href;
  }
  const reached = WILDCARD.has(host) ? wildcardAs : host;
  return `mqtt://${reached.includes(':') ? `[${reached}]` : reached}:${port ?? 1883}`;
}

/** Whether only gateways on the server's own machine can reach the embedded broker (MQTT_HOST on loopback, the default). */
export function brokerOnLoopbackOnly(external: string | null, host: string): boolean {
  return !external && LOOPBACK.has(host);
}
