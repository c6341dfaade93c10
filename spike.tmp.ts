import { Redis } from 'ioredis';
async function tryIt(label: string, opts: any) {
  let ready = false; let times = 0;
  const r = new Redis({ host: '127.0.0.1', lazyConnect: true, maxRetriesPerRequest: null, connectTimeout: 2000, retryStrategy: (n) => { times = n; return ready ? 200 : n <= 2 ? 200 : null; }, ...opts });
  const errs: string[] = [];
  r.on('error', (e) => errs.push(e.message));
  const t0 = Date.now();
  try { await r.connect(); ready = true; console.log(label, 'connected', await r.ping()); } catch (e) { console.log(label, 'connect rejected:', (e as Error).message, 'after', Date.now() - t0, 'ms, retries', times, 'errors', errs); }
  r.disconnect();
}
await tryIt('closed port', { port: 6392 });
await tryIt('wrong pw', { port: 6391, password: 'bad' });
await tryIt('no pw', { port: 6391 });
await tryIt('good pw', { port: 6391, password: 'pw' });
await tryIt('bad db', { port: 6391, password: 'pw', db: 99 });
