// `check`: wiring findings plus the worst-case ratings sheet, one list of findings.
import { designCircuit, SUPPLY_ID, type Design } from '../circuit/design.ts';
import { CircuitEngine, type OperatingPoint } from '../circuit/engine.ts';
import { coldDcNodes } from './linear.ts';
import { ratingsSheet, type RatingsOptions, type RatingsSheet } from './ratings-sheet.ts';
import { checkWiring, type Finding } from './wiring-check.ts';

export interface CheckResult {
  readonly findings: readonly Finding[];
  readonly ratings: RatingsSheet;
}

const ORDER = { error: 0, warning: 1, note: 2 } as const;

/** Wiring check and ratings sheet of a design; findings sorted errors first. */
export function checkDesign(design: Design, options: RatingsOptions = {}): CheckResult {
  const circuit = designCircuit(design);
  let op: OperatingPoint | undefined = options.op;
  if (!op) { try { op = new CircuitEngine(circuit, options.sampleRateHz ?? 48000).operatingPoint(); } catch { op = undefined; } }
  const cold = coldDcNodes(circuit, { [SUPPLY_ID]: options.unloadedSupplyVolts ?? design.supply.volts });
  const wiring = checkWiring(design, { ...(op ? { warmNodes: op.nodes } : {}), coldNodes: cold });
  const ratings = ratingsSheet(design, { ...options, ...(op ? { op } : {}) });
  const findings = [...wiring, ...ratings.findings].sort((a, b) => ORDER[a.severity] - ORDER[b.severity]);
  return { findings, ratings };
}
