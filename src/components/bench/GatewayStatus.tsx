// The bench header's gateways, each online or offline, following the live socket: a gateway that
// drops or is revoked while the page is open is shown offline without a reload. One that has never
// connected is "not connected yet": a bench being set up, not a fault.
import { useBenchSetup, type GatewayAtRender } from './useBenchSetup.ts';

export default function GatewayStatus(props: { bench: string; gateways: GatewayAtRender[] }) {
  const { presence: gateways, setup } = useBenchSetup(props.bench, props.gateways);
  if (gateways.length === 0) return <> · no gateway assigned</>;
  const neverConnected = setup?.kind === 'not-connected';
  return (
    <span aria-live="polite" data-testid="gateway-status">
      {gateways.map((g) => (
        <span key={g.id}>
          {' · '}
          <a className="hover:underline" href={`/benches/${props.bench}/gateways/${g.id}`}>
            <span className={g.online ? 'text-good' : neverConnected ? 'text-muted' : 'text-bad'} aria-hidden="true">{neverConnected ? '○' : '●'}</span> {g.id} {g.online ? 'online' : neverConnected ? 'not connected yet' : 'offline'}
          </a>
        </span>
      ))}
    </span>
  );
}
