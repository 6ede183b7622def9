/**
 * A k-fold trial's checkpoint: the k fold checkpoints in one byte string, so the run loop and the
 * checkpoint stores keep it like any other and a halving sampler continues each fold from its own.
 * Layout: the 4 bytes `RWFB`, the format version and k as little-endian uint32s, k byte lengths
 * (uint32), then the k checkpoints (each in the `RWCK` format of `format.ts`) end to end.
 */
export const FOLD_BUNDLE_VERSION = 1;
const MAGIC = 'RWFB';

export function encodeFoldBundle(parts: readonly Uint8Array[]): Uint8Array {
  const header = 12 + 4 * parts.length;
  const bytes = new Uint8Array(header + parts.reduce((sum, part) => sum + part.byteLength, 0));
  const view = new DataView(bytes.buffer);
  for (let i = 0; i < 4; i++) bytes[i] = MAGIC.charCodeAt(i);
  view.setUint32(4, FOLD_BUNDLE_VERSION, true);
  view.setUint32(8, parts.length, true);
  let offset = header;
  parts.forEach((part, i) => {
    view.setUint32(12 + 4 * i, part.byteLength, true);
    bytes.set(part, offset);
    offset += part.byteLength;
  });
  return bytes;
}

/** True when `bytes` start like a fold bundle. */
export function isFoldBundle(bytes: Uint8Array): boolean {
  return bytes.byteLength >= 12 && String.fromCharCode(bytes[0]!, bytes[1]!, bytes[2]!, bytes[3]!) === MAGIC;
}

/**
 * The k fold checkpoints of a bundle.
 * @throws Error when the bytes are not a bundle of this version, hold another number of folds, or are cut short.
 */
export function decodeFoldBundle(bytes: Uint8Array, k?: number): Uint8Array[] {
  if (!isFoldBundle(bytes)) throw new Error('fold checkpoint: not a fold bundle (no RWFB magic)');
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const version = view.getUint32(4, true);
  if (version !== FOLD_BUNDLE_VERSION) throw new Error(`fold checkpoint: bundle version ${version}, expected ${FOLD_BUNDLE_VERSION}`);
  const count = view.getUint32(8, true);
  if (k !== undefined && count !== k) throw new Error(`fold checkpoint: holds ${count} folds, the study has ${k}`);
  let offset = 12 + 4 * count;
  const parts: Uint8Array[] = [];
  for (let i = 0; i < count; i++) {
    const length = view.getUint32(12 + 4 * i, true);
    if (offset + length > bytes.byteLength) throw new Error('fold checkpoint: cut short');
    parts.push(bytes.slice(offset, offset + length));
    offset += length;
  }
  if (offset !== bytes.byteLength) throw new Error('fold checkpoint: trailing bytes');
  return parts;
}
