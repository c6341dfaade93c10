// The file Electron runs ("main" in package.json). bin/start.mjs bundles main.ts and preload.ts
// into build/ first; run `npm start` rather than Electron directly.
const path = require('node:path');
const fs = require('node:fs');
const built = path.join(__dirname, 'build', 'main.cjs');
if (!fs.existsSync(built)) {
  console.error('Reelwright: the Electron shell is not built yet; run `npm start`.');
  process.exit(2);
}
require(built);
