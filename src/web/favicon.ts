/**
 * The site icon: a plumb line (a cord with its bob) drawn as a 16 x 16 ICO, built in code so that
 * no binary file has to be kept. ICO layout (Microsoft "Icons" documentation): a 6-byte header, one
 * 16-byte directory entry, then a BITMAPINFOHEADER whose height counts the colour rows and the
 * AND-mask rows together, the BGRA rows bottom-up, and a 1-bit AND mask padded to 32-bit rows.
 */
const size = 16;
const ink = { blue: 0xa8, green: 0x5f, red: 0x1f };

/** Whether the pixel at column x, row y (top-down) belongs to the drawing. */
function isInk(x: number, y: number): boolean {
  const centre = 7.5;
  if (y >= 1 && y <= 8) return Math.abs(x - centre) < 1; // the cord, two pixels wide
  if (y === 0) return x >= 4 && x <= 11; // the bar the cord hangs from
  // The bob: widest just below the cord, narrowing to a point at the bottom row.
  const halfWidth = y <= 10 ? 2 + (y - 9) * 1.5 : 3.5 - (y - 10) * 0.75;
  return y <= 15 && Math.abs(x - centre) <= halfWidth;
}

export function renderFavicon(): Uint8Array {
  const pixelBytes = size * size * 4;
  const maskBytes = size * 4; // one bit a pixel, rows padded to 4 bytes
  const imageBytes = 40 + pixelBytes + maskBytes;
  const buffer = Buffer.alloc(6 + 16 + imageBytes);
  buffer.writeUInt16LE(0, 0);
  buffer.writeUInt16LE(1, 2); // type 1 = icon
  buffer.writeUInt16LE(1, 4); // one image
  buffer.writeUInt8(size, 6);
  buffer.writeUInt8(size, 7);
  buffer.writeUInt8(0, 8); // no palette
  buffer.writeUInt8(0, 9);
  buffer.writeUInt16LE(1, 10); // colour planes
  buffer.writeUInt16LE(32, 12); // bits per pixel
  buffer.writeUInt32LE(imageBytes, 14);
  buffer.writeUInt32LE(22, 18);
  const header = 22;
  buffer.writeUInt32LE(40, header);
  buffer.writeInt32LE(size, header + 4);
  buffer.writeInt32LE(size * 2, header + 8);
  buffer.writeUInt16LE(1, header + 12);
  buffer.writeUInt16LE(32, header + 14);
  buffer.writeUInt32LE(0, header + 16); // uncompressed
  buffer.writeUInt32LE(pixelBytes + maskBytes, header + 20);
  const pixels = header + 40;
  for (let row = 0; row < size; row += 1) {
    const y = size - 1 - row; // bitmaps are stored bottom-up
    for (let x = 0; x < size; x += 1) {
      const at = pixels + (row * size + x) * 4;
      if (!isInk(x, y)) continue; // zero bytes: transparent
      buffer.writeUInt8(ink.blue, at);
      buffer.writeUInt8(ink.green, at + 1);
      buffer.writeUInt8(ink.red, at + 2);
      buffer.writeUInt8(0xff, at + 3);
    }
  }
  // The AND mask stays zero: the alpha channel already says what is transparent.
  return new Uint8Array(buffer);
}
