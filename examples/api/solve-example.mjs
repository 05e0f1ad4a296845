// Solve a rig with the library API and write its rig file and HTML report.
// Run from the repository root after `npm run build`: node examples/api/solve-example.mjs [OUT_DIR]
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as path from 'node:path';
import {
  loadRigDescription,
  simulate,
  sessionFromSimulation,
  solveRig,
  buildRigFile,
  writeRigFile,
  renderHtmlReport,
} from 'rigsolve';

// A synthetic session with known truth; for recorded data use loadSession('session.yaml').
const sim = simulate(loadRigDescription('rigs/stereo-bench.yaml'), { frames: 20 });
const session = sessionFromSimulation(sim);

const solution = solveRig(session);
const rig = buildRigFile(solution);
for (const cam of rig.cameras) {
  const mm = cam.translation.map((m) => (m * 1000).toFixed(1)).join(', ');
  const sigma = cam.sigma_translation_mm.map((s) => s.toFixed(2)).join(', ');
  console.log(`${cam.name}: position [${mm}] mm ± [${sigma}] mm, RMS ${cam.rms_px.toFixed(3)} px`);
}
console.log(`sigma0 ${solution.sigma0.toFixed(3)}, ${solution.converged ? 'converged' : 'NOT converged'}`);

const out = process.argv[2] ?? fs.mkdtempSync(path.join(os.tmpdir(), 'rigsolve-example-'));
writeRigFile(path.join(out, 'rig.yaml'), rig, { force: true });
fs.writeFileSync(path.join(out, 'report.html'), renderHtmlReport(solution, rig));
console.log(`wrote ${path.join(out, 'rig.yaml')} and ${path.join(out, 'report.html')}`);
