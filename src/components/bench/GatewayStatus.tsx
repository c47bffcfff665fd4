// The bench header's gateways, each online or offline, following the live socket: a gateway that
// drops or is revoked while the page is open is shown offline without a reload.
import type { GatewayPresence } from '../../lib/client/gateway-presence.ts';
import { useGatewayPresence } from './useGatewayPresence.ts';

export default function GatewayStatus(props: { bench: string; gateways: GatewayPresence[] }) {
  const gateways = useGatewayPresence(props.bench, props.gateways);
  if (gateways.length === 0) return <> · no gateway assigned</>;
  return (
    <span aria-live="polite" data-testid="gateway-status">
      {gateways.map((g) => (
        <span key={g.id}>
          {' · '}
          <a className="hover:underline" href={`/benches/${props.bench}/gateways/${g.id}`}>
            <span className={g.online ? 'text-good' : 'text-bad'} aria-hidden="true">●</span> {g.id} {g.online ? 'online' : 'offline'}
          </a>
        </span>
      ))}
    </span>
  );
}
