// The bench header's gateways, each online, silent or offline, following the live socket: a gateway
// that drops, is revoked or falls silent while the page is open is shown so without a reload. One
// that has never connected is "not connected yet": a bench being set up, not a fault.
import { SILENT_TITLE } from '../../lib/client/format.ts';
import { useNow } from '../../lib/client/use-now.ts';
import { gatewayStateText, gatewayStateTone } from './gateway-state.ts';
import { useBenchSetup, type GatewayAtRender } from './useBenchSetup.ts';

export default function GatewayStatus(props: { bench: string; gateways: GatewayAtRender[] }) {
  const { presence: gateways, setup } = useBenchSetup(props.bench, props.gateways);
  const now = useNow();
  if (gateways.length === 0) return <> · no gateway assigned</>;
  const neverConnected = setup?.kind === 'not-connected';
  return (
    <span aria-live="polite" data-testid="gateway-status">
      {gateways.map((g) => (
        <span key={g.id}>
          {' · '}
          <a className="hover:underline" href={`/benches/${props.bench}/gateways/${g.id}`} title={g.silentSince !== undefined ? SILENT_TITLE : undefined}>
            <span className={neverConnected ? 'text-muted' : gatewayStateTone(g)} aria-hidden="true">{neverConnected ? '○' : '●'}</span> {g.id} {neverConnected ? 'not connected yet' : gatewayStateText(g, now)}
          </a>
        </span>
      ))}
    </span>
  );
}
