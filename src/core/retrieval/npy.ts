// The NumPy .npy format, version 1.0 (NumPy Enhancement Proposal 1, "A simple file format for NumPy arrays"):
// magic "\x93NUMPY", version bytes 1 0, a little-endian uint16 header length, an ASCII dict
// {'descr': '<f4', 'fortran_order': False, 'shape': (rows, cols), } padded with spaces and ended by "\n"
// so that the data starts on a multiple of 64 bytes, then the raw little-endian float32 data in C order.

export function writeNpyFloat32(data: Float32Array, rows: number, cols: number): Uint8Array {
  if (data.length !== rows * cols) throw new RangeError(`writeNpy: ${data.length} values for shape (${rows}, ${cols})`);
  let header = `{'descr': '<f4', 'fortran_order': False, 'shape': (${rows}, ${cols}), }`;
  const preamble = 10; // magic (6) + version (2) + header length (2)
  const total = Math.ceil((preamble + header.length + 1) / 64) * 64;
  header = header + ' '.repeat(total - preamble - header.length - 1) + '\n';
  const out = new Uint8Array(total + data.length * 4);
  out.set([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 1, 0], 0); // \x93 N U M P Y, version 1.0
  new DataView(out.buffer).setUint16(8, header.length, true);
  for (let i = 0; i < header.length; i++) out[preamble + i] = header.charCodeAt(i);
  const view = new DataView(out.buffer, total);
  for (let i = 0; i < data.length; i++) view.setFloat32(i * 4, data[i], true);
  return out;
}
