/** A Standard Webhooks receiver for tests, written from the specification alone. */
import { createHmac, timingSafeEqual } from 'node:crypto';

/**
 * A receiver written from the Standard Webhooks specification alone (checks.md, "Webhooks"):
 * the signature header is a space-separated list of `v1,<base64>` entries; one must equal
 * base64(HMAC-SHA256(secret bytes, `<id>.<timestamp>.<body>`)), the secret being the base64
 * after `whsec_`; the timestamp within 5 minutes of the receiver's clock. Compared in
 * constant time.
 */
export function verifiedBySpecification(secret: string, h: Record<string, string | undefined>, body: string, now: Date): boolean {
  const [id, timestamp, header] = [h['webhook-id'], h['webhook-timestamp'], h['webhook-signature']];
  if (!id || !timestamp || !header || !/^\d+$/.test(timestamp)) return false;
  if (Math.abs(now.getTime() / 1000 - Number(timestamp)) > 300) return false;
  const key = Buffer.from(secret.replace(/^whsec_/, ''), 'base64');
  const expected = createHmac('sha256', key).update(`${id}.${timestamp}.${body}`).digest();
  return header.split(' ').some((entry) => {
    const [version, sig] = entry.split(',', 2);
    const given = Buffer.from(sig ?? '', 'base64');
    return version === 'v1' && given.length === expected.length && timingSafeEqual(given, expected);
  });
}
