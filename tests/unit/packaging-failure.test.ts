// `npm run package` without a network: electron-builder's own failure, as it printed it on this
// machine (no internet: the name of Electron's release host does not resolve), becomes one line that
// names the cause and what to do; a failure of another kind is not dressed up as a download problem.

import { describe, expect, it } from 'vitest';
import { packagingFailure } from '../../scripts/packaging-failure.mjs';

// electron-builder 26.17's own output on this machine, `npm run package -- --linux deb` (stdout, three
// lines of its stack kept).
const OFFLINE = `  • packaging       platform=linux arch=x64 electron=45.5.0 appOutDir=dist/linux-unpacked
  ⨯ getaddrinfo ENOTFOUND github.com  failedTask=build stackTrace=RequestError: getaddrinfo ENOTFOUND github.com
    at ClientRequest.<anonymous> (/work/main/node_modules/got/dist/source/core/index.js:970:111)
    at Object.onceWrapper (node:events:634:26)
    at ClientRequest.emit (node:events:531:35)`;

describe('packagingFailure', () => {
  it('says an offline run in one line: the cause, and to package on a machine with internet', () => {
    const line = packagingFailure(OFFLINE, '45.5.0');
    expect(line).not.toBeNull();
    expect(line!.split('\n')).toHaveLength(1);
    expect(line).toContain('getaddrinfo ENOTFOUND github.com');
    expect(line).toContain('Electron 45.5.0');
    expect(line).toMatch(/Run `npm run package` on a machine with internet access\.$/);
    expect(line).not.toMatch(/stackTrace|at ClientRequest/);
  });

  it('a refused connection (a proxy or mirror that is not there) is a download failure too', () => {
    expect(packagingFailure('  ⨯ connect ECONNREFUSED 127.0.0.1:9  failedTask=build', '45.5.0')).toContain('connect ECONNREFUSED 127.0.0.1:9');
  });

  it('leaves any other failure to be shown whole', () => {
    // Failures of other kinds, written for this test: a missing runtime package, a missing icon.
    expect(packagingFailure('  ⨯ Cannot compute electron version from installed node modules - none of the possible electron modules are installed.', '45.5.0')).toBeNull();
    expect(packagingFailure('  ⨯ ENOENT: no such file or directory, open resources/build/icon.png', '45.5.0')).toBeNull();
  });
});
