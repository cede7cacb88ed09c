import { Webhook } from 'standardwebhooks';
import { describe, expect, it } from 'vitest';
import { signWebhook } from '../../src/notify/sign-webhook.js';

describe('signing webhooks', () => {
  // Test vector of the Standard Webhooks specification's library tests
  // (repository standard-webhooks/standard-webhooks; checks.md).
  it('reproduces the specification test vector', () => {
    const headers = signWebhook(
      'whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw',
      'msg_p5jXN8AQM9LWM0D4loKWxJek',
      new Date(1614265330 * 1000),
      '{"test": 2432232314}',
    );
    expect(headers).toEqual({
      'webhook-id': 'msg_p5jXN8AQM9LWM0D4loKWxJek',
      'webhook-timestamp': '1614265330',
      'webhook-signature': 'v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE=',
    });
  });

  it('produces headers a receiver using the reference library accepts', () => {
    const secret = 'whsec_c3RyYW5kbGluZS1leGFtcGxlLXNlY3JldC1rZXk=';
    const body = JSON.stringify({ type: 'event.opened', data: { id: 'ev_1' } });
    const headers = signWebhook(secret, 'msg_1', new Date(), body);
    expect(new Webhook(secret).verify(body, { ...headers })).toEqual(JSON.parse(body));
    expect(() => new Webhook(secret).verify(`${body} `, { ...headers })).toThrow();
  });
});
