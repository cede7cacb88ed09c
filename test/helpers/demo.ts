/** Reads the demo gold and story map. */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

/** The demo-feed folder. */
export const DEMO_DIR = fileURLToPath(new URL('../../demo-feed/', import.meta.url));

/** One gold line. */
export interface GoldLine {
  article: string;
  sentence: number;
  text: string;
  event: string;
}

/** One story-map line. */
export interface StoryLine {
  article: string;
  outlet: string;
  topic: string;
  story: string;
  copyOf: string | null;
}

function jsonl<T>(file: string): T[] {
  return readFileSync(`${DEMO_DIR}${file}`, 'utf8')
    .trim()
    .split('\n')
    .map((l) => JSON.parse(l) as T);
}

/** The demo's gold lines. */
export const demoGold = (): GoldLine[] => jsonl<GoldLine>('gold.jsonl');
/** The demo's story map. */
export const demoStories = (): StoryLine[] => jsonl<StoryLine>('stories.jsonl');
