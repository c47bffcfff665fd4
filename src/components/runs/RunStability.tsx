// A run's stability in its report: the history's Allan charts over the run, drawn from the answer
// the server computed for the page (no second request).
import type { ViewChannel } from '../../lib/bench-view.ts';
import type { Stability } from '../../lib/stability.ts';
import { StabilityView } from '../history/StabilityCard.tsx';

export default function RunStability(props: { stability: Stability; channels: ViewChannel[] }) {
  return <StabilityView answer={props.stability} loading={false} error={null} channels={props.channels} title="Stability over the holds" />;
}
