// Engine real-time factors per template, oversampling factor and tube-function option; prints
// JSON (with the command that produced it) or one line per case. `npx valvewright bench` runs
// this file as an esbuild bundle; it can also be run directly:
//   npx tsx bench/engine.bench.ts --json [--seconds S] [--template T] [--tubes exact|table|both]
import { benchReport, parseBenchArgs } from '../src/cli/commands/bench.ts';

const argv = process.argv.slice(2);
const o = parseBenchArgs(argv);
const bundled = !import.meta.url.endsWith('.ts');
const command = bundled ? `npx valvewright bench${argv.map((x) => ' ' + x).join('')}` : `npx tsx bench/engine.bench.ts${argv.map((x) => ' ' + x).join('')}`;
const report = benchReport(
  command,
  o.names,
  o.seconds,
  o.tubes,
  bundled ? 'esbuild bundle (as shipped)' : 'tsx loader',
  o.json ? undefined : (l) => console.log(l),
);
if (o.json) console.log(JSON.stringify(report, null, 2));
