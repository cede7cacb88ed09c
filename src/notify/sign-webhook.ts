/**
 * Standard Webhooks signing (standard-webhooks/standard-webhooks, spec/standard-webhooks.md):
 * `webhook-signature` is `v1,<base64 HMAC-SHA256 of "<id>.<timestamp>.<body>">` keyed with
 * the base64 secret after its `whsec_` prefix. The reference library `standardwebhooks`
 * does the signing, so our headers are byte-for-byte what receivers verify.
 */
import { Webhook } from 'standardwebhooks';

/** The three headers of a signed delivery. */
export interface WebhookHeaders {
  'webhook-id': string;
  'webhook-timestamp': string;
  'webhook-signature': string;
}

/**
 * Signs `body` for delivery `id` at time `at`, with each secret given: during a secret's
 * rotation both the new and the old one sign, space-separated (the specification lets a
 * receiver accept any signature it can verify).
 */
export function signWebhook(secrets: string | readonly string[], id: string, at: Date, body: string): WebhookHeaders {
  const signature = (typeof secrets === 'string' ? [secrets] : secrets).map((s) => new Webhook(s).sign(id, at, body)).join(' ');
  return { 'webhook-id': id, 'webhook-timestamp': String(Math.floor(at.getTime() / 1000)), 'webhook-signature': signature };
}
