/**
 * Draws the Shrinkwise icons and writes them as PNG files next to this script.
 *
 *   npx tsx addin/assets/make-icons.ts
 *
 * The artwork is ours: a deep-teal rounded square with three white bars that shrink from left to
 * right (coefficients pulled toward zero), the smallest bar in amber. Shapes are described in unit
 * coordinates and rasterised with 8 × 8 supersampling per pixel, so every size is drawn afresh rather
 * than scaled. The PNG encoder is written here with Node's zlib (8-bit RGBA, no filters, one IDAT),
 * so no image library is needed. Output is deterministic for a given Node/zlib version; the PNGs
 * are committed, so this only needs rerunning when the artwork changes.
 */
import { writeFileSync } from "fs";
import { join } from "path";
import { deflateSync } from "zlib";

/** Sizes used by manifest.xml (16/32/80 ribbon, 32 icon, 64 high-resolution icon) plus 128 for a store listing. */
export const ICON_SIZES = [16, 32, 64, 80, 128] as const;

type Rgba = [number, number, number, number];

const BACKGROUND: Rgba = [0x14, 0x5a, 0x52, 255]; // deep teal; white on it has contrast about 7.6:1
const BAR: Rgba = [255, 255, 255, 255];
const ACCENT: Rgba = [0xf2, 0xb1, 0x34, 255]; // amber

interface Shape {
  colour: Rgba;
  /** True when the unit-square point (x, y) (y down) lies inside the shape. */
  contains(x: number, y: number): boolean;
}

function roundedRect(x0: number, y0: number, x1: number, y1: number, r: number, colour: Rgba): Shape {
  return {
    colour,
    contains(x, y) {
      if (x < x0 || x > x1 || y < y0 || y > y1) return false;
      const cx = Math.min(Math.max(x, x0 + r), x1 - r);
      const cy = Math.min(Math.max(y, y0 + r), y1 - r);
      const dx = x - cx;
      const dy = y - cy;
      return dx * dx + dy * dy <= r * r;
    },
  };
}

/** The artwork, back to front. Bars stand on a common baseline at y = 0.80. */
function artwork(): Shape[] {
  const base = 0.8;
  const width = 0.17;
  const left = [0.18, 0.415, 0.65];
  const heights = [0.58, 0.36, 0.16];
  const colours = [BAR, BAR, ACCENT];
  const shapes: Shape[] = [roundedRect(0, 0, 1, 1, 0.2, BACKGROUND)];
  for (let k = 0; k < 3; k++) {
    shapes.push(roundedRect(left[k], base - heights[k], left[k] + width, base, 0.035, colours[k]));
  }
  return shapes;
}

/** RGBA pixels (row-major, 4 bytes each) of the icon at `size` × `size`. */
export function renderIcon(size: number): Uint8Array {
  const shapes = artwork();
  const samples = 8;
  const pixels = new Uint8Array(size * size * 4);
  for (let py = 0; py < size; py++) {
    for (let px = 0; px < size; px++) {
      // Average premultiplied colour over the sub-samples, painting shapes back to front.
      let r = 0;
      let g = 0;
      let b = 0;
      let a = 0;
      for (let sy = 0; sy < samples; sy++) {
        for (let sx = 0; sx < samples; sx++) {
          const x = (px + (sx + 0.5) / samples) / size;
          const y = (py + (sy + 0.5) / samples) / size;
          let top: Rgba | null = null;
          for (const shape of shapes) if (shape.contains(x, y)) top = shape.colour;
          if (top) {
            r += top[0];
            g += top[1];
            b += top[2];
            a += 255;
          }
        }
      }
      const n = samples * samples;
      const offset = (py * size + px) * 4;
      const alpha = a / n;
      // Un-premultiply: colour of the covered part, alpha = coverage.
      pixels[offset] = alpha > 0 ? Math.round((r / n) * (255 / alpha)) : 0;
      pixels[offset + 1] = alpha > 0 ? Math.round((g / n) * (255 / alpha)) : 0;
      pixels[offset + 2] = alpha > 0 ? Math.round((b / n) * (255 / alpha)) : 0;
      pixels[offset + 3] = Math.round(alpha);
    }
  }
  return pixels;
}

const CRC_TABLE = (() => {
  const table = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    table[n] = c >>> 0;
  }
  return table;
})();

/** CRC-32 as PNG uses it (ISO 3309 polynomial, reflected). */
function crc32(bytes: Uint8Array): number {
  let c = 0xffffffff;
  for (const byte of bytes) c = CRC_TABLE[(c ^ byte) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

function chunk(type: string, data: Uint8Array): Buffer {
  const body = Buffer.concat([Buffer.from(type, "ascii"), Buffer.from(data)]);
  const out = Buffer.alloc(body.length + 8);
  out.writeUInt32BE(data.length, 0);
  body.copy(out, 4);
  out.writeUInt32BE(crc32(body), body.length + 4);
  return out;
}

/** A PNG file (8-bit RGBA, non-interlaced) holding `rgba`. */
export function encodePng(width: number, height: number, rgba: Uint8Array): Buffer {
  const header = Buffer.alloc(13);
  header.writeUInt32BE(width, 0);
  header.writeUInt32BE(height, 4);
  header[8] = 8; // bit depth
  header[9] = 6; // colour type: RGBA
  header[10] = 0; // compression: deflate
  header[11] = 0; // filter method 0
  header[12] = 0; // no interlace
  // Each scanline starts with its filter byte (0 = none).
  const raw = Buffer.alloc(height * (width * 4 + 1));
  for (let y = 0; y < height; y++) {
    raw[y * (width * 4 + 1)] = 0;
    Buffer.from(rgba.buffer, rgba.byteOffset + y * width * 4, width * 4).copy(raw, y * (width * 4 + 1) + 1);
  }
  const signature = Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
  return Buffer.concat([signature, chunk("IHDR", header), chunk("IDAT", deflateSync(raw, { level: 9 })), chunk("IEND", new Uint8Array(0))]);
}

export function iconFileName(size: number): string {
  return `icon-${size}.png`;
}

function main(): void {
  for (const size of ICON_SIZES) {
    const file = join(__dirname, iconFileName(size));
    writeFileSync(file, encodePng(size, size, renderIcon(size)));
    console.log(`wrote ${file}`);
  }
}

if (require.main === module) main();
