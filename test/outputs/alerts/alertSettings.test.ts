import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parse as parseYaml } from 'yaml';
import { afterAll, describe, expect, it } from 'vitest';
import { ConfigError, validateConfig } from '../../../src/config/loadConfig.ts';
import { alertMessage, type AlertMessage } from '../../../src/outputs/alerts/alertMessage.ts';
import { validateAlertSettings } from '../../../src/outputs/alerts/alertSettings.ts';

const dir = mkdtempSync(join(tmpdir(), 'residuum-alert-settings-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const hook = { url: 'https://hooks.example.org/residuum' };

function fails(raw: unknown, message: RegExp, env: Record<string, string> = {}) {
  expect(() => validateAlertSettings(raw, { file: 'site.yaml', base: dir, env })).toThrow(ConfigError);
  expect(() => validateAlertSettings(raw, { file: 'site.yaml', base: dir, env })).toThrow(message);
}

describe('validateAlertSettings', () => {
  it('fills in the defaults', () => {
    expect(validateAlertSettings({ webhooks: [hook] })).toEqual({
      quietMs: 300_000,
      rules: ['over-capacity', 'low-stock', 'camera-offline'],
      webhooks: [{ url: hook.url, rules: ['over-capacity', 'low-stock', 'camera-offline'], timeoutMs: 10_000, retries: 5 }],
    });
    const email = validateAlertSettings({ email: { smtp: { host: 'smtp.example.org', security: 'tls' }, from: 'a@example.org', to: 'b@example.org' } }).email!;
    // check: RFC 8314 §7.3 (recalled from memory): port 465 for submission over implicit TLS; 587 for submission (RFC 6409).
    expect(email.smtp).toMatchObject({ port: 465, security: 'tls', rejectUnauthorized: true });
    expect(validateAlertSettings({ email: { smtp: { host: 'smtp.example.org' }, from: 'a@example.org', to: ['b@example.org'] } }).email!.smtp).toMatchObject({ port: 587, security: 'starttls' });
  });

  it('reads secrets from text, an environment variable or a file (without its final line break)', () => {
    writeFileSync(join(dir, 'secret'), 'from-a-file\n');
    expect(validateAlertSettings({ webhooks: [{ ...hook, secret: 'plain' }] }).webhooks[0].secret).toBe('plain');
    expect(validateAlertSettings({ webhooks: [{ ...hook, secret: { env: 'HOOK' } }] }, { env: { HOOK: 'from-env' } }).webhooks[0].secret).toBe('from-env');
    expect(validateAlertSettings({ webhooks: [{ ...hook, secret: { file: 'secret' } }] }, { base: dir }).webhooks[0].secret).toBe('from-a-file');
  });

  it('names the field of every mistake, and never shows a secret', () => {
    fails({}, /^site\.yaml: alerts needs at least one webhook/);
    fails({ webhooks: [{ url: 'ftp://x.example.org/' }] }, /alerts\.webhooks\[0\]\.url must be an http: or https: URL, got "ftp:"/);
    fails({ webhooks: [{ url: 'https://user:pw@x.example.org/' }] }, /alerts\.webhooks\[0\]\.url must not contain a user name or password/);
    fails({ webhooks: [hook], quietSeconds: -1 }, /alerts\.quietSeconds must be a number from 0 to 86400, got -1/);
    fails({ webhooks: [hook], rules: ['fire'] }, /alerts\.rules\[0\] must be one of over-capacity, low-stock, camera-offline, got "fire"/);
    fails({ rules: ['camera-offline'], webhooks: [{ ...hook, rules: ['low-stock'] }] }, /alerts\.webhooks\[0\]\.rules\[0\] must be one of camera-offline/);
    fails({ webhooks: [{ ...hook, retries: 21 }] }, /alerts\.webhooks\[0\]\.retries must be a whole number from 0 to 20/);
    fails({ webhooks: [{ ...hook, secret: { env: 'NOT_SET' } }] }, /alerts\.webhooks\[0\]\.secret\.env names the environment variable NOT_SET, which is not set or empty/);
    fails({ webhooks: [{ ...hook, secret: { file: 'missing' } }] }, /alerts\.webhooks\[0\]\.secret\.file cannot be read: .*missing \(ENOENT, no such file\)/);
    fails({ webhooks: [{ ...hook, secret: { env: 'A', file: 'b' } }] }, /alerts\.webhooks\[0\]\.secret must have exactly one of env/);
    fails({ webhooks: [{ ...hook, sekret: 'x' }] }, /alerts\.webhooks\[0\]\.sekret is not a known setting here/);
    const smtp = { host: 'smtp.example.org' };
    fails({ email: { smtp, from: 'a@example.org', to: ['not an address'] } }, /alerts\.email\.to\[0\] must be an e-mail address/);
    fails({ email: { smtp, from: 'a@example.org' } }, /alerts\.email\.to must be one address or a list/);
    fails({ email: { smtp: { ...smtp, security: 'ssl' }, from: 'a@example.org', to: 'b@example.org' } }, /alerts\.email\.smtp\.security must be starttls, tls or none, got "ssl"/);
    fails({ email: { smtp: { ...smtp, password: 'pw-123' }, from: 'a@example.org', to: 'b@example.org' } }, /alerts\.email\.smtp\.password needs alerts\.email\.smtp\.username/);
    fails({ email: { smtp: { ...smtp, security: 'none', username: 'u', password: 'pw-123' }, from: 'a@example.org', to: 'b@example.org' } }, /alerts\.email\.smtp\.password is never sent over an unencrypted connection/);
    try {
      validateAlertSettings({ email: { smtp: { ...smtp, security: 'none', username: 'u', password: 'pw-123' }, from: 'a@example.org', to: 'b@example.org' } });
    } catch (error) {
      expect((error as Error).message).not.toContain('pw-123');
    }
  });

  it('is the alerts section of the service configuration', () => {
    const config = validateConfig({ cameras: [{ id: 'a', source: { kind: 'synthetic', scene: 'reading-room' } }], alerts: { webhooks: [hook] } }, join(dir, 'site.yaml'));
    expect(config.alerts?.webhooks[0].url).toBe(hook.url);
    expect(() => validateConfig({ cameras: [{ id: 'a', source: { kind: 'synthetic', scene: 'reading-room' } }], alerts: { webhook: [hook] } }, 'site.yaml')).toThrow(
      /^site\.yaml: alerts\.webhook is not a known setting here/,
    );
  });
});

describe('the README', () => {
  const readme = readFileSync(fileURLToPath(new URL('../../../README.md', import.meta.url)), 'utf8');
  const section = readme.slice(readme.indexOf('## Alerts'), readme.indexOf('## Counting in real rooms'));
  const block = (lang: string, n = 0) => section.split('```' + lang + '\n')[n + 1].split('```')[0];

  it('has an alerts example that validates', () => {
    mkdirSync(join(dir, 'secrets'), { recursive: true });
    writeFileSync(join(dir, 'secrets', 'smtp-password'), 'x\n');
    const settings = validateAlertSettings((parseYaml(block('yaml')) as { alerts: unknown }).alerts, { base: dir, env: { RESIDUUM_WEBHOOK_SECRET: 'y' } });
    expect(settings.webhooks[0].rules).toEqual(['over-capacity', 'camera-offline']);
    expect(settings.email?.to).toHaveLength(2);
  });

  it('shows a message as alertMessage makes it', () => {
    const shown = JSON.parse(block('json')) as AlertMessage;
    const made = alertMessage(
      { rule: 'over-capacity', phase: 'started', camera: 'reading-room', cameraName: 'Reading room', zone: 'tables', zoneName: 'Reading tables', since: Date.parse(shown.since), at: Date.parse(shown.at), figures: { count: 12, capacity: 10, peak: 12 } },
      'Riverside branch library',
      shown.id,
    );
    expect(made).toEqual(shown);
  });
});
