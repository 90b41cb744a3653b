/**
 * Text from untrusted UTF-8 bytes that keeps invalid bytes apart.
 *
 * A decoder replaces every invalid byte with U+FFFD, so `a\xff` and `a\xfe` would both
 * become `a\uFFFD` and two producers' ids would be counted as one shard. Here every byte
 * that is not part of a well-formed UTF-8 sequence becomes a mark that no well-formed
 * text holds (a lone surrogate), one mark per byte and a different one per byte value:
 * ids and keys stay distinct through JSON.parse, and {@link isWellFormedText} tells the
 * decoders which of them to reject. A genuine U+FFFD (the bytes EF BF BD) stays U+FFFD.
 */

declare global {
  interface String {
    /** True when the string has no lone surrogate (ES2024; V8 since Node 20). */
    isWellFormed(): boolean;
  }
}

const lenient = new TextDecoder('utf-8', { ignoreBOM: true });
const strict = new TextDecoder('utf-8', { ignoreBOM: true, fatal: true });
const replacementCharacter = '\uFFFD';

/**
 * The text of the UTF-8 bytes `bytes[start..end)` with each byte outside a well-formed
 * sequence (Unicode's table of well-formed UTF-8 byte sequences, as the WHATWG Encoding
 * standard's decoder reads them) written as U+FFFD followed by the lone surrogate
 * U+DC00 + byte. The U+FFFD in front keeps a JSON escape of a high surrogate (`\ud800`)
 * just before the byte from pairing with the mark into a valid character. Valid input
 * costs one native decode and one search for U+FFFD; only input holding U+FFFD is decoded
 * again. O(length).
 * Example: decodeUtf8Marked(Uint8Array.of(0x61, 0xff)) is 'a\uFFFD\uDCFF'.
 */
export function decodeUtf8Marked(bytes: Uint8Array, start = 0, end = bytes.length): string {
  const span = bytes.subarray(start, end);
  const text = lenient.decode(span);
  if (!text.includes(replacementCharacter)) return text;
  try {
    return strict.decode(span);
  } catch {
    return markInvalid(span);
  }
}

/** True when the text holds no lone surrogate: no invalid byte mark and no lone `\ud800` escape. */
export function isWellFormedText(text: string): boolean {
  return text.isWellFormed();
}

/** Decodes byte by byte, marking each byte that does not start or continue a well-formed sequence. */
function markInvalid(bytes: Uint8Array): string {
  const parts: string[] = [];
  let at = 0;
  while (at < bytes.length) {
    const length = sequenceLength(bytes, at);
    if (length > 0) {
      parts.push(lenient.decode(bytes.subarray(at, at + length)));
      at += length;
    } else {
      parts.push(replacementCharacter, String.fromCharCode(0xdc00 + bytes[at]));
      at += 1;
    }
  }
  return parts.join('');
}

/**
 * Length of the well-formed UTF-8 sequence at `at` (1 to 4), or 0 if the byte there
 * starts none. The lead byte fixes the length and the range of the second byte; the
 * other continuation bytes are 80..BF.
 */
function sequenceLength(bytes: Uint8Array, at: number): number {
  const lead = bytes[at];
  if (lead < 0x80) return 1;
  let length: number;
  let low = 0x80;
  let high = 0xbf;
  if (lead >= 0xc2 && lead <= 0xdf) length = 2;
  else if (lead >= 0xe0 && lead <= 0xef) {
    length = 3;
    if (lead === 0xe0) low = 0xa0;
    else if (lead === 0xed) high = 0x9f;
  } else if (lead >= 0xf0 && lead <= 0xf4) {
    length = 4;
    if (lead === 0xf0) low = 0x90;
    else if (lead === 0xf4) high = 0x8f;
  } else return 0;
  if (at + length > bytes.length) return 0;
  const second = bytes[at + 1];
  if (second < low || second > high) return 0;
  for (let offset = 2; offset < length; offset++) {
    const next = bytes[at + offset];
    if (next < 0x80 || next > 0xbf) return 0;
  }
  return length;
}
