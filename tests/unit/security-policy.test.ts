import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { securityPolicy } from '../../electron/main/security-policy.ts';

const policy = securityPolicy('trimbench://app');
const PAGE = 'trimbench://app/index.html';

describe('window security policy', () => {
  it('grants audio capture to the app page only', () => {
    expect(policy.allowPermissionRequest('media', PAGE, ['audio'])).toBe(true);
    expect(policy.allowPermissionRequest('media', PAGE, ['audio', 'video'])).toBe(false);
    expect(policy.allowPermissionRequest('media', PAGE, ['video'])).toBe(false);
    expect(policy.allowPermissionRequest('media', PAGE, undefined)).toBe(false);
    expect(policy.allowPermissionRequest('media', 'https://example.invalid/', ['audio'])).toBe(false);
    expect(policy.allowPermissionRequest('media', 'trimbench://app.evil/', ['audio'])).toBe(false);
    expect(policy.allowPermissionRequest('speaker-selection', PAGE, undefined)).toBe(true);
    for (const other of ['geolocation', 'notifications', 'clipboard-read', 'openExternal', 'display-capture']) {
      expect(policy.allowPermissionRequest(other, PAGE, undefined)).toBe(false);
    }
    expect(policy.allowPermissionCheck('media', 'trimbench://app')).toBe(true);
    expect(policy.allowPermissionCheck('media', 'file://')).toBe(false);
  });

  it('refuses navigation away from the app', () => {
    expect(policy.allowNavigation(`${PAGE}#sheet`)).toBe(true);
    expect(policy.allowNavigation('https://example.invalid/')).toBe(false);
    expect(policy.allowNavigation('file:///etc/passwd')).toBe(false);
    expect(policy.allowNavigation('not a url')).toBe(false);
  });

  it('takes IPC only from the top frame of the app page', () => {
    expect(policy.allowIpcSender(PAGE, true)).toBe(true);
    expect(policy.allowIpcSender(PAGE, false)).toBe(false);
    expect(policy.allowIpcSender('https://example.invalid/', true)).toBe(false);
    expect(policy.allowIpcSender(undefined, true)).toBe(false);
  });

  it('the page carries a Content-Security-Policy that allows only its own scripts', () => {
    const html = readFileSync(fileURLToPath(new URL('../../renderer/index.html', import.meta.url)), 'utf8');
    const csp = /http-equiv="Content-Security-Policy"\s+content="([^"]+)"/.exec(html)?.[1] ?? '';
    expect(csp).toMatch(/default-src 'self'/);
    expect(csp).toMatch(/script-src 'self';/);
    expect(csp).not.toMatch(/unsafe-eval/);
    expect(csp).toMatch(/object-src 'none'/);
  });
});
