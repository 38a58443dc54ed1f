// Shareable link: the design travels in the URL hash as base64url (RFC 4648 section 5) of
// deflate-compressed JSON ("z." prefix) or of plain JSON ("j." prefix).
import { validateDesign, type Design } from '../../dsp/circuit/design.ts';

export const HASH_KEY = 'design=';

export function toBase64Url(bytes: Uint8Array): string {
  let bin = '';
  for (let i = 0; i < bytes.length; i++) bin += String.fromCharCode(bytes[i]!);
  return btoa(bin).replace(/\+/g, '-').replace(/\//g, '_').replace(/=+$/, '');
}

export function fromBase64Url(text: string): Uint8Array {
  if (!/^[A-Za-z0-9_-]*$/.test(text)) throw new Error('link is not base64url text');
  const pad = text.length % 4 === 0 ? '' : '='.repeat(4 - (text.length % 4));
  const bin = atob(text.replace(/-/g, '+').replace(/_/g, '/') + pad);
  const out = new Uint8Array(bin.length);
  for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
  return out;
}

async function pipe(bytes: Uint8Array, stream: CompressionStream | DecompressionStream): Promise<Uint8Array> {
  const body = new Blob([bytes as BlobPart]).stream().pipeThrough(stream);
  return new Uint8Array(await new Response(body).arrayBuffer());
}

/** Encode a design for a URL hash (without the leading "#"). */
export async function encodeDesignHash(design: Design): Promise<string> {
  const json = new TextEncoder().encode(JSON.stringify(design));
  if (typeof CompressionStream === 'function') return `${HASH_KEY}z.${toBase64Url(await pipe(json, new CompressionStream('deflate')))}`;
  return `${HASH_KEY}j.${toBase64Url(json)}`;
}

export type HashResult = { readonly ok: true; readonly design: Design } | { readonly ok: false; readonly reason: string } | { readonly ok: 'none' };

/** Decode a hash ("#design=..."): validated design, a one-line reason, or none present. */
export async function decodeDesignHash(hash: string): Promise<HashResult> {
  const h = hash.startsWith('#') ? hash.slice(1) : hash;
  if (!h.startsWith(HASH_KEY)) return { ok: 'none' };
  const body = h.slice(HASH_KEY.length);
  try {
    let bytes: Uint8Array;
    if (body.startsWith('z.')) bytes = await pipe(fromBase64Url(body.slice(2)), new DecompressionStream('deflate'));
    else if (body.startsWith('j.')) bytes = fromBase64Url(body.slice(2));
    else return { ok: false, reason: 'shared link: unknown encoding (expected "z." or "j.")' };
    const doc: unknown = JSON.parse(new TextDecoder().decode(bytes));
    return { ok: true, design: validateDesign(doc, { wiring: false }) };
  } catch (err) {
    return { ok: false, reason: `shared link: ${(err as Error).message}` };
  }
}
