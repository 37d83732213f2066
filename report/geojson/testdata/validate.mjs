// Validates the golden GeoJSON files with two general-purpose libraries and
// writes validation.json: @placemarkio/check-geojson (RFC 7946 structure)
// and @mapbox/geojson-rewind (is every polygon already wound by the right-hand
// rule: exterior rings counter-clockwise, holes clockwise?).
//
// Usage (from the repository root, Node.js v20):
//
//	P="$(mktemp -d)"; npm install --prefix "$P" @placemarkio/check-geojson@0.1.14 @mapbox/geojson-rewind@0.5.2
//	node report/geojson/testdata/validate.mjs "$P" report/geojson/testdata > report/geojson/testdata/validation.json
import { createRequire } from 'node:module';
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';

const [prefix, dir] = process.argv.slice(2);
const req = createRequire(join(prefix, 'node_modules') + '/');
const { getIssues } = req('@placemarkio/check-geojson');
const rewind = req('@mapbox/geojson-rewind');
const ver = (p) => JSON.parse(readFileSync(join(prefix, 'node_modules', p, 'package.json'))).version;

const out = {
  tools: { '@placemarkio/check-geojson': ver('@placemarkio/check-geojson'), '@mapbox/geojson-rewind': ver('@mapbox/geojson-rewind') },
  files: {},
};
for (const name of ['points_golden.geojson', 'cells_golden.geojson']) {
  const text = readFileSync(join(dir, name), 'utf8');
  const issues = getIssues(text).map((i) => i.message);
  const gj = JSON.parse(text);
  const before = JSON.stringify(gj);
  // false: RFC 7946 winding (exterior counter-clockwise).
  const after = JSON.stringify(rewind(JSON.parse(text), false));
  const polygons = gj.features.filter((f) => f.geometry && f.geometry.type === 'Polygon').length;
  out.files[name] = {
    sha256: createHash('sha256').update(readFileSync(join(dir, name))).digest('hex'),
    issues, rewind_changed: before !== after, polygons,
  };
}
process.stdout.write(JSON.stringify(out, null, 1) + '\n');
