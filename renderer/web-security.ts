/**
 * Web mode's HTTP hardening (Vite's preview server, which `npm start` and the browser tests use):
 * the same security headers as the desktop shell (main/bridge/security.ts: a Content-Security-
 * Policy with frame-ancestors 'none', nosniff, no referrer) on every response, and a limit on
 * request bodies — the editor's server takes none, so anything over REQUEST_BODY_LIMIT bytes is
 * answered 413 and the connection closed. The development server gets the headers but not the
 * CSP, which would block Vite's live-reload client.
 */
import type { Connect, Plugin } from 'vite';
import { SECURITY_HEADERS } from '../main/bridge/security.ts';

export const REQUEST_BODY_LIMIT = 16 * 1024;

function handler(withCsp: boolean): Connect.NextHandleFunction {
  return (req, res, next) => {
    for (const [name, value] of Object.entries(SECURITY_HEADERS)) {
      if (withCsp || name !== 'Content-Security-Policy') res.setHeader(name, value);
    }
    const refuse = () => {
      if (res.headersSent) return;
      res.statusCode = 413;
      res.setHeader('Content-Type', 'text/plain; charset=utf-8');
      res.setHeader('Connection', 'close');
      res.end('request body too large\n');
      req.destroy();
    };
    const declared = Number(req.headers['content-length'] ?? 0);
    if (declared > REQUEST_BODY_LIMIT) return refuse();
    if (req.headers['transfer-encoding'] === undefined && declared === 0) return next();
    // A body: nothing here reads one, so it is taken in (up to the limit) before the request goes on.
    let seen = 0;
    let over = false;
    req.on('data', (chunk: Buffer) => {
      seen += chunk.length;
      if (seen > REQUEST_BODY_LIMIT && !over) {
        over = true;
        refuse();
      }
    });
    req.on('end', () => {
      if (!over) next();
    });
  };
}

export function webSecurity(): Plugin {
  return {
    name: 'reelwright-web-security',
    configureServer: (s) => { s.middlewares.use(handler(false)); },
    configurePreviewServer: (s) => { s.middlewares.use(handler(true)); },
  };
}
