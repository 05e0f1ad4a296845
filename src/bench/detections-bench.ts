/**
 * Benchmark: parse a synthetic 500k-row detections CSV and print the time.
 * Run after `npm run build`: node dist/bench/detections-bench.js [rows]
 * Invented data (synthetic rows), for timing only.
 */
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as path from 'node:path';
import { loadDetections, parseDetections, type DetectionContext } from '../io/detections.js';
import { IssueCollector } from '../io/issues.js';

const rows = Number(process.argv[2] ?? 500_000);
const ctx: DetectionContext = {
  cameras: ['front_center', 'left_side', 'right_side', 'rear'].map((name) => ({ name, resolution: [1280, 800] as const })),
  targets: [{ name: 'board_a', numPoints: 70 }],
};
const parts: string[] = ['frame,camera,target,point,u,v\n'];
for (let i = 0; i < rows; i++) {
  const cam = ctx.cameras[i % 4]!.name;
  parts.push(`${Math.floor(i / 280)},${cam},board_a,${Math.floor(i / 4) % 70},${((i * 7.31) % 1279).toFixed(3)},${((i * 3.17) % 799).toFixed(3)}\n`);
}
const text = parts.join('');
parts.length = 0; // keep only the text alive, as when reading a file
for (let rep = 0; rep < 5; rep++) {
  const t0 = process.hrtime.bigint();
  const c0 = process.cpuUsage();
  const issues = new IssueCollector();
  const r = parseDetections(text, 'bench.csv', ctx, issues);
  const ms = Number(process.hrtime.bigint() - t0) / 1e6;
  const cpu = process.cpuUsage(c0);
  console.log(`rows=${r.table.count} issues=${issues.total} bytes=${text.length} parse_ms=${ms.toFixed(1)} cpu_ms=${((cpu.user + cpu.system) / 1000).toFixed(1)}`);
}

// End to end from disk: read, UTF-8 check, parse.
const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'rigsolve-bench-'));
const file = path.join(dir, 'detections.csv');
fs.writeFileSync(file, text);
try {
  for (let rep = 0; rep < 3; rep++) {
    const t0 = process.hrtime.bigint();
    const r = loadDetections(file, ctx);
    const ms = Number(process.hrtime.bigint() - t0) / 1e6;
    console.log(`from disk: rows=${r.table.count} load_ms=${ms.toFixed(1)}`);
  }
} finally {
  fs.rmSync(dir, { recursive: true, force: true });
}
