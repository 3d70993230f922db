// What `npm run package` says when electron-builder stops: one line when the cause is the network
// (no internet, a proxy or firewall in the way, a mirror without the file), else nothing, and its
// own output is shown whole.

/** The phrases a failed download leaves in electron-builder's output (Node's and its Go helper's errors). */
const NETWORK_FAILURE = /getaddrinfo \S+ \S+|connect (ECONNREFUSED|ETIMEDOUT|ENETUNREACH|EHOSTUNREACH) \S+|\b(ENOTFOUND|EAI_AGAIN|ECONNREFUSED|ECONNRESET|ETIMEDOUT|ENETUNREACH|EHOSTUNREACH)\b|socket hang up|fetch failed|status code 40[34]/i;

/** The one line for a download that failed, or null when electron-builder stopped for another reason. */
export function packagingFailure(output, electronVersion) {
  const line = output.split('\n').find((text) => NETWORK_FAILURE.test(text));
  if (line === undefined) return null;
  const cause = NETWORK_FAILURE.exec(line)[0];
  return `Trimbench cannot be packaged here: electron-builder could not download what the packages need (Electron ${electronVersion} for each target, the native database module's prebuilt binaries): ${cause}. Run \`npm run package\` on a machine with internet access.`;
}
