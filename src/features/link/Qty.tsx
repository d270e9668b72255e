import { sizeParts } from '../../lib/format';

/** A number with its unit in the lighter unit style. */
export function Qty({ value, unit }: { value: string | number; unit: string }) {
  return (
    <>
      {value} <span className="unit">{unit}</span>
    </>
  );
}

/** A byte size with its unit. */
export function Size({ bytes }: { bytes: number }) {
  const [v, u] = sizeParts(bytes);
  return <Qty value={v} unit={u} />;
}
