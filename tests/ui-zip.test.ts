// Store-only ZIP writer: CRC-32 against published/independent values, archive read back by hand.
import { describe, expect, it } from 'vitest';
import { crc32 as zlibCrc32 } from 'node:zlib';
import { buildZip, crc32, dosDateTime } from '../src/ui/model/zip.ts';

const enc = new TextEncoder();

interface Parsed {
  name: string;
  method: number;
  crc: number;
  size: number;
  data: Uint8Array;
  time: number;
  date: number;
}

/** Minimal reader following PKWARE APPNOTE.TXT (from memory): end record -> central directory -> local headers. */
function readZip(bytes: Uint8Array): Parsed[] {
  const v = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const end = bytes.length - 22; // no archive comment
  expect(v.getUint32(end, true)).toBe(0x06054b50);
  expect(v.getUint16(end + 20, true)).toBe(0); // comment length
  const count = v.getUint16(end + 10, true);
  expect(v.getUint16(end + 8, true)).toBe(count);
  const cdSize = v.getUint32(end + 12, true),
    cdOffset = v.getUint32(end + 16, true);
  expect(cdOffset + cdSize).toBe(end);
  const dec = new TextDecoder('utf-8', { fatal: true });
  const out: Parsed[] = [];
  let p = cdOffset;
  for (let i = 0; i < count; i++) {
    expect(v.getUint32(p, true)).toBe(0x02014b50);
    const flags = v.getUint16(p + 8, true),
      method = v.getUint16(p + 10, true);
    const time = v.getUint16(p + 12, true),
      date = v.getUint16(p + 14, true);
    const crc = v.getUint32(p + 16, true),
      csize = v.getUint32(p + 20, true),
      size = v.getUint32(p + 24, true);
    const nlen = v.getUint16(p + 28, true),
      xlen = v.getUint16(p + 30, true),
      clen = v.getUint16(p + 32, true);
    const local = v.getUint32(p + 42, true);
    const name = dec.decode(bytes.subarray(p + 46, p + 46 + nlen));
    expect(csize).toBe(size); // stored
    // local header repeats the same fields
    expect(v.getUint32(local, true)).toBe(0x04034b50);
    expect(v.getUint16(local + 6, true)).toBe(flags);
    expect(v.getUint16(local + 8, true)).toBe(method);
    expect(v.getUint32(local + 14, true)).toBe(crc);
    expect(v.getUint32(local + 18, true)).toBe(csize);
    expect(v.getUint32(local + 22, true)).toBe(size);
    const lnlen = v.getUint16(local + 26, true),
      lxlen = v.getUint16(local + 28, true);
    expect(dec.decode(bytes.subarray(local + 30, local + 30 + lnlen))).toBe(name);
    const start = local + 30 + lnlen + lxlen;
    out.push({ name, method, crc, size, data: bytes.subarray(start, start + csize), time, date });
    p += 46 + nlen + xlen + clen;
  }
  expect(p).toBe(end);
  return out;
}

describe('crc32', () => {
  it('gives the standard check value for "123456789"', () => {
    // CRC-32 (ISO-HDLC / ZIP) check value 0xCBF43926: Greg Cook, "Catalogue of parametrised CRC algorithms" (common practice)
    expect(crc32(enc.encode('123456789'))).toBe(0xcbf43926);
  });
  it('is 0 for no bytes and agrees with Node zlib.crc32 on arbitrary data', () => {
    expect(crc32(new Uint8Array(0))).toBe(0); // init and final xor cancel (common practice)
    const data = new Uint8Array(10007);
    let s = 12345;
    for (let i = 0; i < data.length; i++) {
      s = (s * 1103515245 + 12345) >>> 0;
      data[i] = s >>> 24;
    }
    // independent implementation: zlib bundled with Node 20 (node:zlib crc32)
    expect(crc32(data)).toBe(zlibCrc32(data));
  });
});

describe('buildZip', () => {
  const when = new Date(2024, 5, 17, 13, 45, 30);
  const entries = [
    { name: 'a-vs-b/pair-sheet.json', data: enc.encode('{"x":1}\n') },
    { name: 'a-vs-b/tone.wav', data: Uint8Array.from({ length: 3001 }, (_, i) => (i * 7) & 0xff) },
    { name: 'empty.txt', data: new Uint8Array(0) },
    { name: 'notes/µ-tube.md', data: enc.encode('# 12AX7 plate\n') },
  ];
  const zip = buildZip(entries, when);

  it('writes every entry stored, with matching local and central headers, sizes, names and CRCs', () => {
    const parsed = readZip(zip);
    expect(parsed.map((e) => e.name)).toEqual(entries.map((e) => e.name));
    parsed.forEach((e, i) => {
      const src = entries[i]!.data;
      expect(e.method).toBe(0);
      expect(e.size).toBe(src.length);
      expect(Array.from(e.data)).toEqual(Array.from(src));
      expect(e.crc).toBe(zlibCrc32(src));
    });
    // total length: 30 + name + data per local entry, 46 + name per central entry, 22 end record
    const nameBytes = entries.reduce((s, e) => s + enc.encode(e.name).length, 0);
    const dataBytes = entries.reduce((s, e) => s + e.data.length, 0);
    expect(zip.length).toBe(entries.length * (30 + 46) + 2 * nameBytes + dataBytes + 22);
  });

  it('encodes the MS-DOS date and time fields', () => {
    const e = readZip(zip)[0]!;
    // DOS date = (year-1980)<<9 | month<<5 | day; time = hour<<11 | minute<<5 | second/2 (common practice)
    expect(e.date).toBe(((2024 - 1980) << 9) | (6 << 5) | 17);
    expect(e.time).toBe((13 << 11) | (45 << 5) | 15);
    expect(dosDateTime(new Date(1975, 0, 1)).date >> 9).toBe(0); // clamped to 1980
  });

  it('refuses names a plain ZIP reader would mishandle, with a one-line reason', () => {
    const d = new Uint8Array(1);
    expect(() =>
      buildZip([
        { name: 'x', data: d },
        { name: 'x', data: d },
      ]),
    ).toThrow(/duplicate entry name "x"/);
    expect(() => buildZip([{ name: '../up', data: d }])).toThrow(/bad entry name/);
    expect(() => buildZip([{ name: '/abs', data: d }])).toThrow(/bad entry name/);
  });

  it('writes an empty archive as just the end record', () => {
    const z = buildZip([]);
    expect(z.length).toBe(22);
    expect(readZip(z)).toEqual([]);
  });
});
