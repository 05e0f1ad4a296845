import { test } from 'vitest';
import fc from 'fast-check';
import { CAMERA_FIXTURES } from '../testing/camera-fixtures.js';
test('dbg', () => {
  const ray = new Float64Array(3);
  for (const f of CAMERA_FIXTURES) {
    let ok = 0, tot = 0;
    for (let u = 0; u < f.width; u += 10) for (let v = 0; v < f.height; v += 10) { tot++; if (f.model.unproject(f.params, [u, v], ray)) ok++; }
    const samples = fc.sample(fc.tuple(fc.double({ min: 0, max: f.width - 1, noNaN: true }), fc.double({ min: 0, max: f.height - 1, noNaN: true })), 3000);
    let ok2 = 0; for (const [u, v] of samples) if (f.model.unproject(f.params, [u, v], ray)) ok2++;
    console.log(f.label, ok, tot, ok2, samples.slice(0, 8).map(s => s.map(x => x.toFixed(1)).join(',')).join(' '));
  }
});
