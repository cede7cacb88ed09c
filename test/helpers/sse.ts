/** Reads a Server-Sent Events stream in tests: connects with fetch, parses events until told to stop. */

/** One event as a client sees it (comments and the retry hint kept apart). */
export interface SseEvent {
  id?: string;
  event?: string;
  data?: string;
  comment?: string;
  retry?: number;
}

/** An open stream: the events so far, a wait for a condition on them, and close. */
export interface SseClient {
  status: number;
  events: SseEvent[];
  until(check: (events: SseEvent[]) => boolean, ms?: number): Promise<void>;
  /** Resolves when the server ends the stream (or close() aborts it). */
  ended: Promise<void>;
  close(): void;
}

/** Connects to `url` and collects its events as they arrive. */
export async function openSse(url: string, headers: Record<string, string> = {}): Promise<SseClient> {
  const abort = new AbortController();
  const res = await fetch(url, { headers: { accept: 'text/event-stream', ...headers }, signal: abort.signal });
  const events: SseEvent[] = [];
  const waiters = new Set<() => void>();
  const ended = (async () => {
    const reader = res.body!.pipeThrough(new TextDecoderStream()).getReader();
    let buffer = '';
    try {
      for (;;) {
        const { value, done } = await reader.read();
        if (done) break;
        buffer += value;
        let cut: number;
        while ((cut = buffer.indexOf('\n\n')) >= 0) {
          events.push(parseBlock(buffer.slice(0, cut)));
          buffer = buffer.slice(cut + 2);
        }
        for (const w of waiters) w();
      }
    } catch {
      // Aborted by close().
    }
  })();
  return {
    status: res.status,
    events,
    ended,
    async until(check, ms = 10_000) {
      const deadline = Date.now() + ms;
      while (!check(events)) {
        if (Date.now() > deadline) throw new Error(`stream: condition not met within ${ms} ms; got ${JSON.stringify(events.slice(-5))}`);
        await new Promise<void>((r) => {
          waiters.add(r);
          setTimeout(r, 50);
        });
      }
    },
    close: () => abort.abort(),
  };
}

function parseBlock(block: string): SseEvent {
  const e: SseEvent = {};
  for (const line of block.split('\n')) {
    if (line.startsWith(':')) e.comment = line.slice(1).trim();
    else {
      const at = line.indexOf(':');
      const field = at < 0 ? line : line.slice(0, at);
      const value = at < 0 ? '' : line.slice(at + 1).replace(/^ /, '');
      if (field === 'id') e.id = value;
      else if (field === 'event') e.event = value;
      else if (field === 'data') e.data = e.data === undefined ? value : `${e.data}\n${value}`;
      else if (field === 'retry') e.retry = Number(value);
    }
  }
  return e;
}
