/**
 * Serves the bundled demo recordings (assets/demo/*.wav) at ./demo/ in web mode: `GET demo/`
 * lists the file names as JSON, `GET demo/NAME.wav` sends one. Nothing else under assets/ is served.
 */
import fs from 'node:fs';
import path from 'node:path';
import type { Connect, Plugin } from 'vite';

export function demoFiles(dir: string): Plugin {
  const handler: Connect.NextHandleFunction = (req, res, next) => {
    const url = new URL(req.url ?? '/', 'http://local');
    const m = /^\/(?:.*\/)?demo\/(.*)$/.exec(url.pathname);
    if (!m) return next();
    const name = decodeURIComponent(m[1]!);
    if (name === '') {
      const list = fs.existsSync(dir) ? fs.readdirSync(dir).filter((n) => /\.wav$/i.test(n)).sort() : [];
      res.setHeader('Content-Type', 'application/json');
      res.end(JSON.stringify(list));
      return;
    }
    if (!/^[\w.-]+\.wav$/i.test(name)) { res.statusCode = 404; res.end(); return; }
    const file = path.join(dir, name);
    if (!fs.existsSync(file)) { res.statusCode = 404; res.end(); return; }
    res.setHeader('Content-Type', 'audio/wav');
    res.setHeader('Content-Length', String(fs.statSync(file).size));
    fs.createReadStream(file).pipe(res);
  };
  return {
    name: 'reelwright-demo-files',
    configureServer: (s) => { s.middlewares.use(handler); },
    configurePreviewServer: (s) => { s.middlewares.use(handler); },
  };
}
