/** The UTF-16 flavour of a file's first bytes: a byte order mark, or a NUL beside every ASCII character. */
export function utf16Kind(start: Uint8Array): string | undefined {
  if (start[0] === 0xff && start[1] === 0xfe) return 'UTF-16 (little-endian byte order mark)';
  if (start[0] === 0xfe && start[1] === 0xff) return 'UTF-16 (big-endian byte order mark)';
  if (start.length >= 4 && start[0] !== 0 && start[1] === 0 && start[2] !== 0 && start[3] === 0) return 'UTF-16 (little-endian, no byte order mark)';
  if (start.length >= 4 && start[0] === 0 && start[1] !== 0 && start[2] === 0 && start[3] !== 0) return 'UTF-16 (big-endian, no byte order mark)';
  return undefined;
}
