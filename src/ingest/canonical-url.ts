/**
 * The canonical form of an article URL, so that the same article reached through two links
 * is stored once: scheme and host in lower case, default port, fragment and the tracking
 * parameters feeds append (utm_*, fbclid, gclid and the like) dropped, a trailing slash
 * dropped. Query parameters that remain keep their order (some sites route by them).
 */
const TRACKING = /^(utm_[a-z]+|fbclid|gclid|dclid|msclkid|mc_cid|mc_eid|_ga|ref|ref_src|cmpid|ncid|ocid|igshid)$/i;

/** The canonical URL, or null when `url` is not an absolute http(s) URL. */
export function canonicalUrl(url: string | null): string | null {
  if (!url) return null;
  let u: URL;
  try {
    u = new URL(url);
  } catch {
    return null;
  }
  if (u.protocol !== 'http:' && u.protocol !== 'https:') return null;
  u.hash = '';
  for (const k of [...u.searchParams.keys()]) if (TRACKING.test(k)) u.searchParams.delete(k);
  let s = u.href;
  if (u.search === '' && s.endsWith('?')) s = s.slice(0, -1);
  if (u.pathname.length > 1 && u.pathname.endsWith('/') && u.search === '') s = s.slice(0, -1);
  // Same article over http and https: one key.
  return s.replace(/^http:/, 'https:');
}
