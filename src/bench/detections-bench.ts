/**
 * Benchmark: parse a synthetic 500k-row detections CSV and print the time.
 * Run after `npm run build`: node dist/bench/detections-bench.js [rows]
 * Invented data (synthetic rows), for timing only.
 */
import { parseDetections, type DetectionContext } from '../io/detections.js';
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
  const issues = new IssueCollector();
  const r = parseDetections(text, 'bench.csv', ctx, issues);
  const ms = Number(process.hrtime.bigint() - t0) / 1e6;
  console.log(`rows=${r.table.count} issues=${issues.total} bytes=${text.length} parse_ms=${ms.toFixed(1)}`);
}
