// Before a bench's first counts: what it still lacks and who can give it, instead of tiles that
// only say "waiting". An admin gets the link to the bench's admin page, where gateways are added.
import type { BenchSetup } from '../../lib/bench-setup.ts';

export function BenchSetupNotice(props: { bench: string; setup: BenchSetup; isAdmin: boolean }) {
  const { bench, setup } = props;
  return (
    <div className="card !py-3 text-sm" role="status" data-testid="bench-setup">
      {setup.kind === 'no-gateway' ? (
        <p>
          <span className="font-semibold">Nothing can arrive here yet: this bench has no gateway.</span>{' '}
          {props.isAdmin ? (
            <>Add one on <a className="underline" href={`/admin/benches/${bench}`}>the bench's admin page</a>, which shows its token once, then start it beside the bench with <code className="figure">npm run gateway</code>.</>
          ) : (
            'An admin adds one under Benches & gateways.'
          )}
        </p>
      ) : (
        <p>
          <span className="font-semibold">{setup.gateways.join(', ')} {setup.gateways.length > 1 ? 'have' : 'has'} not connected yet.</span>{' '}
          Counts, figures and the drive come alive once {setup.gateways.length > 1 ? 'one does' : 'it does'}: start it beside the bench with its id and token (<code className="figure">npm run gateway -- --id {setup.gateways[0]} …</code>).
          {' '}Its <a className="underline" href={`/benches/${bench}/gateways/${setup.gateways[0]}`}>health page</a> shows whether the broker refused it.
        </p>
      )}
    </div>
  );
}
