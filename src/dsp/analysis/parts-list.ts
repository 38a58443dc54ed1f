// Parts list (CSV, RFC 4180 quoting): reference, kind, value, tolerance, rating to buy, notes.
import type { Design } from '../circuit/design.ts';
import { formatValue } from '../parts/values.ts';
import { designEnvelopes, tubeType } from '../tubes/library.ts';
import type { RatingsSheet } from './ratings-sheet.ts';
import type { Finding } from './wiring-check.ts';

export interface PartsRow {
  readonly ref: string;
  readonly kind: string;
  readonly value: string;
  readonly tolerance: string;
  readonly buy: string;
  readonly worstCase: string;
  readonly notes: string;
}

export const PARTS_COLUMNS = ['ref', 'kind', 'value', 'tolerance', 'rating to buy', 'worst case', 'notes'] as const;

const pct = (t: number | undefined) => (t === undefined ? '' : `±${+(t * 100).toPrecision(3)}%`);
const r3 = (x: number) => +x.toPrecision(3);

/** One row per design part, ratings from the sheet, notes from label and findings. */
export function partsRows(design: Design, sheet: RatingsSheet, findings: readonly Finding[] = []): PartsRow[] {
  const notesFor = (id: string, label?: string) =>
    [label ?? '', ...findings.filter((f) => f.parts.includes(id) && f.severity !== 'note').map((f) => `${f.severity}: ${f.code}`)].filter(Boolean).join('; ');
  const rows: PartsRow[] = [];
  const envelopeOf = new Map(designEnvelopes(design.parts).flatMap((e) => e.partIds.map((id) => [id, e] as const)));
  for (const p of design.parts) {
    switch (p.kind) {
      case 'resistor':
      case 'pot': {
        const r = sheet.resistors.find((x) => x.id === p.id);
        rows.push({
          ref: p.id,
          kind: p.kind === 'pot' ? `pot (${p.taper})` : 'resistor',
          value: formatValue(p.ohms, 'ohms', { style: 'rkm' }),
          tolerance: pct(p.tolerance),
          buy: r?.buyWatts != null ? `${r.buyWatts} W, ${r.buyWorkingVolts} V working` : 'special part',
          worstCase: r ? `${r3(r.worstWatts)} W ${r.worstCondition}, ${r3(r.peakVolts)} V peak` : '',
          notes: notesFor(p.id, p.label),
        });
        break;
      }
      case 'capacitor': {
        const c = sheet.capacitors.find((x) => x.id === p.id);
        rows.push({
          ref: p.id,
          kind: p.polarized ? 'capacitor (electrolytic, + on ' + p.nodes[0] + ')' : 'capacitor',
          value: `${formatValue(p.farads, 'farads', { ascii: true })}F`,
          tolerance: pct(p.tolerance),
          buy: c?.buyVolts != null ? `${c.buyVolts} V` : 'special part',
          worstCase: c ? `${r3(c.worstVolts)} V ${c.worstCondition}` : '',
          notes: notesFor(p.id, p.label),
        });
        break;
      }
      case 'switch':
        rows.push({
          ref: p.id,
          kind: 'switch',
          value: p.closed ? 'closed' : 'open',
          tolerance: '',
          buy: 'rated for B+',
          worstCase: '',
          notes: notesFor(p.id, p.label),
        });
        break;
      case 'tube': {
        const t = tubeType(p.type),
          tr = sheet.tubes.find((x) => x.id === p.id);
        // sections of one envelope: the first buys the tube and carries the heater, the others point to it
        const env = envelopeOf.get(p.id),
          first = env?.partIds[0] ?? p.id,
          shared = env && env.partIds.length > 1;
        rows.push({
          ref: p.id,
          kind: t.kind,
          value: p.type,
          tolerance: '',
          buy: first === p.id ? `${env?.type ?? p.type} + socket` : `in ${first}'s ${env?.type ?? p.type}`,
          worstCase: tr
            ? `plate ${r3(Math.max(tr.plateWatts.warm ?? 0, tr.plateWatts.maxInput ?? 0))} W of ${tr.plateWatts.max} W; heater-cathode ${r3(tr.heaterCathode.worstVolts)} V of ${tr.heaterCathode.max} V`
            : '',
          notes: notesFor(
            p.id,
            [
              p.label,
              first === p.id
                ? `heater ${t.ratings.heaterVolts} V ${t.ratings.heaterAmps} A${shared ? ` (shared by ${env.partIds.join(', ')})` : ''}${p.heaterVolts ? `, elevated to ${p.heaterVolts} V` : ''}`
                : `shares ${first}'s envelope and heater`,
            ]
              .filter(Boolean)
              .join('; '),
          ),
        });
        break;
      }
    }
  }
  const f = sheet.capacitors.find((x) => x.id === 'B+.filter');
  if (f)
    rows.push({
      ref: 'B+.filter',
      kind: 'capacitor (electrolytic)',
      value: `${formatValue(design.supply.filterFarads, 'farads', { ascii: true })}F`,
      tolerance: '',
      buy: f.buyVolts != null ? `${f.buyVolts} V` : 'special part',
      worstCase: `${r3(f.worstVolts)} V ${f.worstCondition}`,
      notes: 'supply filter',
    });
  return rows;
}

function csvField(s: string): string {
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/** CSV text with a header row, CRLF line ends (RFC 4180). */
export function partsCsv(rows: readonly PartsRow[]): string {
  const lines = [PARTS_COLUMNS.join(','), ...rows.map((r) => [r.ref, r.kind, r.value, r.tolerance, r.buy, r.worstCase, r.notes].map(csvField).join(','))];
  return lines.join('\r\n') + '\r\n';
}
