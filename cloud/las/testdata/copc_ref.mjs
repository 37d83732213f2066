// Regenerates copc_ref.json: sample points of the shared LAS reference
// files as decoded by the general-purpose reader in the npm package copc
// (its Las.Header and Las.View modules), which reads LAS 1.2 and 1.4 with
// point formats 0–3 and 6–8.
//
// Usage (from the repository root):
//
//	P="$(mktemp -d)"; npm install --prefix "$P" copc@0.0.8
//	node cloud/las/testdata/copc_ref.mjs "$P" ../shared/reference/las > cloud/las/testdata/copc_ref.json
import { createRequire } from 'node:module';
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';

const [prefix, dir] = process.argv.slice(2);
const req = createRequire(join(prefix, 'node_modules') + '/');
const { Las } = req('copc');
const version = JSON.parse(readFileSync(join(prefix, 'node_modules/copc/package.json'))).version;

const out = { source: 'copc (Las.Header, Las.View)', version, files: {} };
for (const name of readdirSync(dir).filter((f) => f.endsWith('.las')).sort()) {
  const buf = new Uint8Array(readFileSync(join(dir, name)));
  try {
    const h = Las.Header.parse(buf);
    const n = Number(h.pointCount);
    const body = buf.slice(h.pointDataOffset, h.pointDataOffset + n * h.pointDataRecordLength);
    const view = Las.View.create(body, h);
    const get = (d) => (view.dimensions[d] ? view.getter(d) : () => null);
    const [x, y, z, inten, cls, ret, gps] = ['X', 'Y', 'Z', 'Intensity', 'Classification', 'ReturnNumber', 'GpsTime'].map(get);
    const idx = [...new Set([0, Math.floor(n / 2), n - 1])];
    const points = idx.map((i) => ({
      record: i + 1, x: x(i), y: y(i), z: z(i),
      intensity: inten(i), classification: cls(i), return_number: ret(i), gps_time: gps(i),
    }));
    out.files[name] = { version: `${h.majorVersion}.${h.minorVersion}`, format: h.pointDataRecordFormat, count: n, points };
  } catch (e) {
    out.files[name] = { error: String(e) };
  }
}
process.stdout.write(JSON.stringify(out, null, 1) + '\n');
