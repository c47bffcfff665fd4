// What the admin page shows beside a gateway's new token: the command that starts the project's
// gateway with it, pointed at this server's broker, so a lab's first gateway needs no guessing of
// URLs, ports or prefixes.
import { brokerOnLoopbackOnly, brokerUrlForGateways } from '../broker-url.ts';
import { DEFAULT_PREFIX } from '../contract/wire.ts';
import { runtime } from './runtime.ts';

export interface GatewayConnect {
  /** Starts `npm run gateway` with this id and token on a serial counter (gateway/README.md lists the other drivers). */
  command: string;
  /** Only the server's own machine reaches the broker (MQTT_HOST on loopback, the default). */
  loopbackOnly: boolean;
}

/** `pageHost`: the host the admin reached this page at, which names a broker listening on every interface. Null while no live path runs. */
export function gatewayConnect(gatewayId: string, token: string, pageHost: string): GatewayConnect | null {
  const b = runtime().gatewayBroker;
  if (!b) return null;
  const url = brokerUrlForGateways(b.external, b.host, b.port, pageHost);
  const prefix = b.prefix === DEFAULT_PREFIX ? '' : ` --prefix '${b.prefix}'`;
  return {
    command: `FRINGEWISE_GATEWAY_TOKEN=${token} npm run gateway -- --id ${gatewayId} --url ${url}${prefix} --driver serial --device /dev/ttyACM0`,
    loopbackOnly: brokerOnLoopbackOnly(b.external, b.host),
  };
}
