// The Content-Security-Policy of the window, shared by the browser host (HTTP header) and the Electron shell
// (response header on its own pages). Scripts and connections only from the app itself; no remote content.
export const CONTENT_SECURITY_POLICY = [
  "default-src 'none'",
  "script-src 'self'",
  // Svelte and d3 set style attributes (positions, colours); no remote styles.
  "style-src 'self' 'unsafe-inline'",
  "img-src 'self' data: blob:",
  "font-src 'self'",
  "connect-src 'self'",
  "worker-src 'none'",
  "object-src 'none'",
  "base-uri 'none'",
  "form-action 'none'",
  "frame-ancestors 'none'",
].join('; ');
