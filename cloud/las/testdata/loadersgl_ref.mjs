// Regenerates loadersgl_ref.json: sample points of the shared LAS reference
// files as decoded by the general-purpose @loaders.gl/las reader.
//
// Usage (from the repository root):
//
//	P="$(mktemp -d)"; npm install --prefix "$P" @loaders.gl/las@4.5.1 @loaders.gl/core@4.5.1
//	node cloud/las/testdata/loadersgl_ref.mjs "$P" ../shared/reference/las > cloud/las/testdata/loadersgl_ref.json
import { createRequire } from 'node:module';
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';

const [prefix, dir] = process.argv.slice(2);
const req = createRequire(join(prefix, 'node_modules') + '/');
const core = await import(pathToFileURL(req.resolve('@loaders.gl/core')).href).then((m) => (m.parse ? m : m.default));
const las = await import(pathToFileURL(req.resolve('@loaders.gl/las')).href).then((m) => (m.LASLoader ? m : m.default));
const version = JSON.parse(readFileSync(join(prefix, 'node_modules/@loaders.gl/las/package.json'))).version;

const out = { source: '@loaders.gl/las', version, files: {} };
for (const name of readdirSync(dir).filter((f) => f.endsWith('.las')).sort()) {
  const buf = readFileSync(join(dir, name));
  const ab = buf.buffer.slice(buf.byteOffset, buf.byteOffset + buf.byteLength);
  let mesh;
  try {
    mesh = await core.parse(ab, las.LASLoader, { las: { shape: 'mesh', fp64: true }, worker: false });
  } catch (e) {
    out.files[name] = { error: String(e) };
    continue;
  }
  const pos = mesh.attributes.POSITION.value;
  const n = pos.length / 3;
  const idx = [...new Set([0, Math.floor(n / 2), n - 1])].filter((i) => i >= 0);
  const a = mesh.attributes;
  const pts = idx.map((i) => ({
    record: i + 1, x: pos[3 * i], y: pos[3 * i + 1], z: pos[3 * i + 2],
    intensity: a.intensity ? a.intensity.value[i] : null,
    classification: a.classification ? a.classification.value[i] : null,
  }));
  out.files[name] = { count: n, points: pts };
}
process.stdout.write(JSON.stringify(out, null, 1) + '\n');
