// Store-only ZIP writer (no compression, no ZIP64): local file headers, central directory,
// end of central directory record. Layout per PKWARE APPNOTE.TXT (from memory: sections 4.3.7
// local header, 4.3.12 central header, 4.3.16 end record).

export interface ZipEntry {
  /** Path inside the archive, "/" separated, no leading "/". */
  readonly name: string;
  readonly data: Uint8Array;
}

const LOCAL_SIG = 0x04034b50;
const CENTRAL_SIG = 0x02014b50;
const END_SIG = 0x06054b50;
const VERSION_NEEDED = 10; // 1.0: stored entries only
const FLAG_UTF8_NAME = 0x0800; // general purpose bit 11
const MAX_U32 = 0xffffffff;
const MAX_ENTRIES = 0xffff;

let crcTable: Uint32Array | null = null;

function table(): Uint32Array {
  if (crcTable) return crcTable;
  const t = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1; // reflected 0x04C11DB7
    t[n] = c >>> 0;
  }
  crcTable = t;
  return t;
}

/** CRC-32 as used by ZIP (reflected polynomial 0x04C11DB7, init and final xor 0xFFFFFFFF). */
export function crc32(data: Uint8Array): number {
  const t = table();
  let c = 0xffffffff;
  for (let i = 0; i < data.length; i++) c = (t[(c ^ data[i]!) & 0xff]! ^ (c >>> 8)) >>> 0;
  return (c ^ 0xffffffff) >>> 0;
}

/** MS-DOS time and date fields (2-second resolution, years 1980..2107). */
export function dosDateTime(d: Date): { time: number; date: number } {
  const year = Math.min(2107, Math.max(1980, d.getFullYear()));
  return {
    time: (d.getHours() << 11) | (d.getMinutes() << 5) | (d.getSeconds() >> 1),
    date: ((year - 1980) << 9) | ((d.getMonth() + 1) << 5) | d.getDate(),
  };
}

/** One archive with every entry stored as is. Throws on names or sizes a plain ZIP cannot hold. */
export function buildZip(entries: readonly ZipEntry[], modified: Date = new Date()): Uint8Array {
  if (entries.length > MAX_ENTRIES) throw new Error(`zip: ${entries.length} entries is more than ${MAX_ENTRIES} (ZIP64 not supported)`);
  const enc = new TextEncoder();
  const seen = new Set<string>();
  const names = entries.map((e) => {
    if (e.name === '' || e.name.startsWith('/') || e.name.includes('\\') || e.name.split('/').includes('..'))
      throw new Error(`zip: bad entry name "${e.name}"`);
    if (seen.has(e.name)) throw new Error(`zip: duplicate entry name "${e.name}"`);
    seen.add(e.name);
    const b = enc.encode(e.name);
    if (b.length > 0xffff) throw new Error(`zip: entry name too long (${b.length} bytes)`);
    return b;
  });
  const { time, date } = dosDateTime(modified);
  const crcs = entries.map((e) => crc32(e.data));
  let localBytes = 0;
  let centralBytes = 0;
  for (let i = 0; i < entries.length; i++) {
    localBytes += 30 + names[i]!.length + entries[i]!.data.length;
    centralBytes += 46 + names[i]!.length;
  }
  if (localBytes + centralBytes + 22 > MAX_U32)
    throw new Error(`zip: archive would be ${localBytes + centralBytes + 22} bytes, over 4 GiB (ZIP64 not supported)`);
  const out = new Uint8Array(localBytes + centralBytes + 22);
  const v = new DataView(out.buffer);
  const offsets: number[] = [];
  let p = 0;
  for (let i = 0; i < entries.length; i++) {
    const name = names[i]!,
      data = entries[i]!.data;
    offsets.push(p);
    v.setUint32(p, LOCAL_SIG, true);
    v.setUint16(p + 4, VERSION_NEEDED, true);
    v.setUint16(p + 6, FLAG_UTF8_NAME, true);
    v.setUint16(p + 8, 0, true); // method 0: stored
    v.setUint16(p + 10, time, true);
    v.setUint16(p + 12, date, true);
    v.setUint32(p + 14, crcs[i]!, true);
    v.setUint32(p + 18, data.length, true);
    v.setUint32(p + 22, data.length, true);
    v.setUint16(p + 26, name.length, true);
    v.setUint16(p + 28, 0, true);
    out.set(name, p + 30);
    out.set(data, p + 30 + name.length);
    p += 30 + name.length + data.length;
  }
  const centralStart = p;
  for (let i = 0; i < entries.length; i++) {
    const name = names[i]!,
      size = entries[i]!.data.length;
    v.setUint32(p, CENTRAL_SIG, true);
    v.setUint16(p + 4, 20, true); // made by: MS-DOS attributes, spec 2.0
    v.setUint16(p + 6, VERSION_NEEDED, true);
    v.setUint16(p + 8, FLAG_UTF8_NAME, true);
    v.setUint16(p + 10, 0, true);
    v.setUint16(p + 12, time, true);
    v.setUint16(p + 14, date, true);
    v.setUint32(p + 16, crcs[i]!, true);
    v.setUint32(p + 20, size, true);
    v.setUint32(p + 24, size, true);
    v.setUint16(p + 28, name.length, true);
    // extra length, comment length, disk number, internal and external attributes: 0
    v.setUint32(p + 42, offsets[i]!, true);
    out.set(name, p + 46);
    p += 46 + name.length;
  }
  v.setUint32(p, END_SIG, true);
  v.setUint16(p + 8, entries.length, true);
  v.setUint16(p + 10, entries.length, true);
  v.setUint32(p + 12, p - centralStart, true);
  v.setUint32(p + 16, centralStart, true);
  return out;
}
