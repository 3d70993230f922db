// The one Content-Security-Policy of the app: main sends it as a header on every response of the
// app's scheme (so it covers the worker and the audio worklets, which a page's meta tag does not),
// renderer/index.html carries the same text for the page, and the browser bench serves it too.
//
// style-src has no 'unsafe-inline': React and uPlot set style properties through the CSSOM
// (element.style), which CSP does not govern, and every stylesheet is a file of the build. The
// browser tests fail on any CSP violation, so an inline style that would be blocked is caught there.

export const CONTENT_SECURITY_POLICY =
  "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; font-src 'self'; " +
  "connect-src 'self'; worker-src 'self'; media-src 'self' mediastream:; object-src 'none'; base-uri 'none'; form-action 'none'";
