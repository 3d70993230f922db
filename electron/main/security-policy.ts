// What the app's window may do, as plain decisions so they can be tested without Electron:
// audio capture and output-device choice for our own page only, no navigation away, no IPC
// from anything but our page's top frame.

export interface SecurityPolicy {
  isAppUrl(url: string | undefined | null): boolean;
  allowPermissionRequest(permission: string, requestingUrl: string | undefined, mediaTypes: readonly string[] | undefined): boolean;
  allowPermissionCheck(permission: string, origin: string | undefined): boolean;
  allowNavigation(url: string): boolean;
  allowIpcSender(frameUrl: string | undefined, isTopFrame: boolean): boolean;
}

const DEVICE_PERMISSIONS = new Set(['media', 'speaker-selection']);

export function securityPolicy(appOrigin: string): SecurityPolicy {
  const isAppUrl = (url: string | undefined | null): boolean => {
    if (!url) return false;
    try {
      return new URL(url).origin === appOrigin || url === appOrigin || url.startsWith(`${appOrigin}/`);
    } catch {
      return false;
    }
  };
  return {
    isAppUrl,
    allowPermissionRequest(permission, requestingUrl, mediaTypes) {
      if (!isAppUrl(requestingUrl)) return false;
      if (permission === 'speaker-selection') return true;
      // Audio only: a request that includes video (or names no type) is refused.
      return permission === 'media' && !!mediaTypes && mediaTypes.length > 0 && mediaTypes.every((type) => type === 'audio');
    },
    allowPermissionCheck(permission, origin) {
      return isAppUrl(origin) && DEVICE_PERMISSIONS.has(permission);
    },
    allowNavigation: isAppUrl,
    allowIpcSender(frameUrl, isTopFrame) {
      return isTopFrame && isAppUrl(frameUrl);
    },
  };
}
