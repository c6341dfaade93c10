/**
 * Serves the bundled demo recordings (assets/demo/*.wav) at ./demo/ in web mode: `GET demo/`
 * lists the file names as JSON, `GET demo/NAME.wav` sends one. Nothing else under assets/ is served.
 * A malformed request (a bad percent-escape) gets 400 and any failure a bare 500: never a stack
 * trace, which would show where the program is installed.
 */
import fs from 'node:fs';
import path from 'node:path';
import type { Connect, Plugin } from 'vite';

export function demoFiles(dir: string): Plugin {
  const reply = (res: Parameters<Connect.NextHandleFunction>[1], status: number, text: string) => {
    res.statusCode = status;
    res.setHeader('Content-Type', 'text/plain; charset=utf-8');
    res.end(text);
  };
  const handler: Connect.NextHandleFunction = (req, res, next) => {
    try {
      const url = new URL(req.url ?? '/', 'http://local');
      const m = /^\/(?:.*\/)?demo\/(.*)$/.exec(url.pathname);
      if (!m) return next();
      let name: string;
      try {
        name = decodeURIComponent(m[1]!);
      } catch {
        return reply(res, 400, 'bad request: malformed percent-escape in the path\n');
      }
      if (name === '') {
        const list = fs.existsSync(dir) ? fs.readdirSync(dir).filter((n) => /\.wav$/i.test(n)).sort() : [];
        res.setHeader('Content-Type', 'application/json');
        res.end(JSON.stringify(list));
        return;
      }
      if (!/^[\w.-]+\.wav$/i.test(name)) return reply(res, 404, 'not found\n');
      const file = path.join(dir, name);
      if (!fs.existsSync(file)) return reply(res, 404, 'not found\n');
      res.setHeader('Content-Type', 'audio/wav');
      res.setHeader('Content-Length', String(fs.statSync(file).size));
      fs.createReadStream(file).on('error', () => res.destroy()).pipe(res);
    } catch {
      if (!res.headersSent) reply(res, 500, 'internal error\n');
      else res.destroy();
    }
  };
  return {
    name: 'reelwright-demo-files',
    configureServer: (s) => { s.middlewares.use(handler); },
    configurePreviewServer: (s) => { s.middlewares.use(handler); },
  };
}
