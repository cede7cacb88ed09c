/** Linker states as earlier versions wrote them, for the migration tests. */
import { type EventState, serialiseEvent } from '../../src/link/event-state.js';

/** `e`'s state with `label` in its header, as states were written before labels left them. */
export function stateWithLabel(e: EventState, label: string): Buffer {
  const current = Buffer.from(serialiseEvent(e));
  const hlen = current.readUInt32LE(0);
  const header = JSON.parse(current.subarray(4, 4 + hlen).toString('utf8')) as Record<string, unknown>;
  const withLabel = Buffer.from(JSON.stringify({ id: header.id, label, ...header }));
  const out = Buffer.concat([Buffer.alloc(4), withLabel, current.subarray(4 + hlen)]);
  out.writeUInt32LE(withLabel.length, 0);
  return out;
}
