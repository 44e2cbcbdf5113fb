/**
 * A wafer-step's feature vector as stored: little-endian Float64, aligned with the catalog positions.
 * (Float64Array uses the platform's byte order, which is little-endian on every platform Node supports
 * here — x86-64 and arm64 — so the bytes are copied as they are; a big-endian host is refused.)
 */
import os from 'node:os';

if (os.endianness() !== 'LE') throw new Error('Lockstep stores feature vectors little-endian; this host is big-endian');

export function encodeValues(values: Float64Array): Buffer {
	return Buffer.from(values.buffer, values.byteOffset, values.byteLength);
}

export function decodeValues(blob: Uint8Array): Float64Array {
	if (blob.byteLength % 8 !== 0) throw new Error(`feature blob of ${blob.byteLength} bytes is not a whole number of Float64`);
	// Copy: the driver's buffer may be pooled and unaligned.
	const copy = new Uint8Array(blob.byteLength);
	copy.set(blob);
	return new Float64Array(copy.buffer);
}
