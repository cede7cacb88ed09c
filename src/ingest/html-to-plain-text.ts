/**
 * HTML bodies to clean plain text with html-to-text: paragraphs become blank-line
 * separated blocks (the splitter treats them as hard sentence breaks), links keep their
 * words only, and images, figures, captions, scripts and styles are dropped.
 */
import { compile } from 'html-to-text';

const SKIP = ['img', 'figure', 'figcaption', 'script', 'style', 'noscript', 'iframe', 'video', 'audio', 'svg', 'form', 'button'];
const HEADINGS = ['h1', 'h2', 'h3', 'h4', 'h5', 'h6'];

// Compiled once: html-to-text documents compile() as the fast path for repeated use.
const convert = compile({
  wordwrap: false,
  preserveNewlines: false,
  selectors: [
    { selector: 'a', options: { ignoreHref: true } },
    ...SKIP.map((selector) => ({ selector, format: 'skip' })),
    ...HEADINGS.map((selector) => ({ selector, format: 'block', options: { uppercase: false } })),
    { selector: 'ul', options: { itemPrefix: '' } },
    { selector: 'table', format: 'block' },
  ],
});

/** Converts an HTML fragment to text whose paragraphs are separated by one blank line. */
export function htmlToPlainText(html: string): string {
  return normaliseText(convert(html));
}

/** Collapses runs of spaces, trims lines and keeps at most one blank line between blocks. */
export function normaliseText(text: string): string {
  return text
    .replace(/\r\n?/g, '\n')
    .replace(/[\u00a0\t\f\v ]+/g, ' ')
    .split('\n')
    .map((line) => line.trim())
    .join('\n')
    .replace(/\n{3,}/g, '\n\n')
    .trim();
}
