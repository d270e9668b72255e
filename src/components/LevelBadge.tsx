const LEVEL = {
  caution: { color: '#C98A00', icon: '▲' },
  warning: { color: '#C23B22', icon: '◆' },
} as const;

const STATE = {
  open: { color: '#B8734A', icon: '●' },
  acknowledged: { color: '#5B7C99', icon: '◐' },
  resolved: { color: '#8A8F98', icon: '○' },
} as const;

/** A trip level as icon + word. */
export function LevelBadge({ level }: { level: keyof typeof LEVEL }) {
  const s = LEVEL[level];
  return (
    <span className="inline-flex items-center gap-1 text-xs font-semibold" style={{ color: s.color }}>
      <span aria-hidden="true">{s.icon}</span>
      {level}
    </span>
  );
}

/** A trip state as icon + word. */
export function TripStateBadge({ state }: { state: keyof typeof STATE }) {
  const s = STATE[state];
  return (
    <span className="inline-flex items-center gap-1 rounded-sm px-1.5 text-xs font-medium" style={{ color: s.color, backgroundColor: `${s.color}1a` }}>
      <span aria-hidden="true">{s.icon}</span>
      {state}
    </span>
  );
}
