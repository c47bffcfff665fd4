// The loading / empty / error line laid over a chart's container while it has nothing to draw.
import type { ReactNode } from 'react';

export function ChartState(props: { error?: boolean; testId?: string; children: ReactNode }) {
  return (
    <p
      className={`pointer-events-none absolute left-1/2 top-[40%] z-10 -translate-x-1/2 -translate-y-1/2 rounded-md border border-line bg-panel px-3 py-1.5 text-center text-sm ${props.error ? 'text-bad' : 'text-muted'}`}
      data-testid={props.testId}
      role={props.error ? 'alert' : undefined}
    >
      {props.children}
    </p>
  );
}
