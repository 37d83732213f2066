// Regenerates webe57_ref.json: the count and the first, middle and last
// points of each shared E57 reference file, as decoded by the
// general-purpose E57 converter in the npm package web-e57 (WebAssembly;
// its "XYZ" output: x y z [r g b] per line, shortest round-trip doubles).
//
// Usage (from the repository root, Node.js v20):
//
//	P="$(mktemp -d)"; npm install --prefix "$P" web-e57@1.2.0
//	node --experimental-wasm-modules cloud/e57/testdata/webe57_ref.mjs "$P" ../shared/reference/e57 > cloud/e57/testdata/webe57_ref.json
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';

const [prefix, dir] = process.argv.slice(2);
const pkg = join(prefix, 'node_modules', 'web-e57');
const { convertE57 } = await import(pathToFileURL(join(pkg, 'e57.js')).href);
const version = JSON.parse(readFileSync(join(pkg, 'package.json'))).version;

const out = { source: 'web-e57 convertE57(data, "XYZ")', version, files: {} };
for (const name of ['bunnyDouble.e57', 'bunnyInt32.e57', 'ColouredCubeFloat.e57', 'bad-crc.e57']) {
  try {
    const data = new Uint8Array(readFileSync(join(dir, name)));
    const lines = convertE57(data, 'XYZ').split('\n').filter((l) => l.trim() !== '');
    const n = lines.length;
    const idx = [...new Set([0, Math.floor(n / 2), n - 1])].filter((i) => i >= 0);
    const points = idx.map((i) => {
      const v = lines[i].trim().split(/\s+/).map(Number);
      return { record: i + 1, x: v[0], y: v[1], z: v[2], rgb: v.length >= 6 ? v.slice(3, 6) : null };
    });
    out.files[name] = { count: n, points };
  } catch (e) {
    out.files[name] = { error: String(e) };
  }
}
process.stdout.write(JSON.stringify(out, null, 1) + '\n');
