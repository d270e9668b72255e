export type HealthState = 'nominal' | 'caution' | 'warning' | 'stale';

const STYLE: Record<HealthState, { color: string; icon: string }> = {
  nominal: { color: '#2F8F6B', icon: '●' },
  caution: { color: '#C98A00', icon: '▲' },
  warning: { color: '#C23B22', icon: '◆' },
  stale: { color: '#8A8F98', icon: '○' },
};

/** A state shown as icon + word, never colour alone. */
export function StateBadge({ state }: { state: HealthState }) {
  const s = STYLE[state];
  return (
    <span className="inline-flex items-center gap-1 rounded-sm px-1.5 text-xs font-medium" style={{ color: s.color, backgroundColor: `${s.color}1a` }}>
      <span aria-hidden="true">{s.icon}</span>
      {state}
    </span>
  );
}
