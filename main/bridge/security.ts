/**
 * The editor page's security headers, one list for the desktop shell (main/electron/main.ts) and
 * web mode (renderer/web-security.ts): a Content-Security-Policy that allows only the page's own
 * scripts, styles and workers and no framing, no MIME sniffing, no referrer. 'wasm-unsafe-eval'
 * (CSP Level 3) lets the page and its workers compile WebAssembly — the FLAC decoder and the SIMD
 * kernels — and nothing else: eval and new Function stay refused.
 */
export const EDITOR_CSP =
  "default-src 'none'; script-src 'self' 'wasm-unsafe-eval'; worker-src 'self'; style-src 'self'; img-src 'self' data: blob:; connect-src 'self'; font-src 'self'; media-src 'self' blob:; base-uri 'none'; form-action 'none'; object-src 'none'; frame-ancestors 'none'";

export const SECURITY_HEADERS: Readonly<Record<string, string>> = {
  'Content-Security-Policy': EDITOR_CSP,
  'X-Content-Type-Options': 'nosniff',
  'Referrer-Policy': 'no-referrer',
};
