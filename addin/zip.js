/* global require, module, Buffer */
/* eslint-disable @typescript-eslint/no-require-imports -- plain CommonJS, run by node directly */
/**
 * A small ZIP writer for the release package (addin/package.js): each entry deflated with
 * node:zlib (raw DEFLATE, method 8) or stored (method 0) when deflating would not make it smaller.
 * Layout per PKWARE's APPNOTE.TXT (the .ZIP file format specification): for every entry a local
 * file header (4.3.7) and its data, then the central directory (4.3.12) and the end of central
 * directory record (4.3.16). Names are UTF-8 with general purpose bit 11 set; no ZIP64, so the
 * writer refuses more than 65,535 entries or 4 GiB (the release is about 85 MB in 200 files).
 * CRC-32 is the ISO 3309 / ITU-T V.42 polynomial of APPNOTE 4.4.7 (0xEDB88320 reflected), computed
 * by the table below; test/addin/package.test.ts checks it against zlib's own crc32 and reads the
 * archives back with Info-ZIP's unzip and Python's zipfile.
 */
"use strict";

const fs = require("fs");
const zlib = require("zlib");

const CRC_TABLE = (() => {
  const table = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    table[n] = c >>> 0;
  }
  return table;
})();

/** CRC-32 of `bytes` (APPNOTE 4.4.7). */
function crc32(bytes) {
  let c = 0xffffffff;
  for (let i = 0; i < bytes.length; i++) c = CRC_TABLE[(c ^ bytes[i]) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

/** MS-DOS date and time (APPNOTE 4.4.6), local time, two-second resolution, from 1980 on. */
function dosDateTime(date) {
  const year = Math.max(1980, date.getFullYear());
  return {
    time: (date.getHours() << 11) | (date.getMinutes() << 5) | Math.floor(date.getSeconds() / 2),
    date: ((year - 1980) << 9) | ((date.getMonth() + 1) << 5) | date.getDate(),
  };
}

const MAX_16 = 0xffff;
const MAX_32 = 0xffffffff;

/**
 * Writes `entries` ({ name, data: Buffer }) to the file `target` as a ZIP archive. Names use "/"
 * and must be relative (no leading "/", no "..", no backslashes). Returns
 * `{ entries, bytes, stored, deflated }`.
 */
function writeZip(target, entries, { modified = new Date(), level = 9 } = {}) {
  if (entries.length > MAX_16) throw new Error(`a ZIP without ZIP64 holds at most ${MAX_16} entries, not ${entries.length}`);
  const seen = new Set();
  const { time, date } = dosDateTime(modified);
  const fd = fs.openSync(target, "w");
  let offset = 0;
  const central = [];
  let stored = 0;
  let deflated = 0;
  const write = (buffer) => {
    fs.writeSync(fd, buffer);
    offset += buffer.length;
  };
  try {
    for (const { name, data } of entries) {
      if (!name || name.startsWith("/") || name.includes("\\") || name.split("/").includes("..")) throw new Error(`bad entry name '${name}'`);
      if (seen.has(name)) throw new Error(`entry '${name}' given twice`);
      seen.add(name);
      const raw = Buffer.isBuffer(data) ? data : Buffer.from(data);
      const packed = zlib.deflateRawSync(raw, { level });
      const method = packed.length < raw.length ? 8 : 0;
      const body = method === 8 ? packed : raw;
      if (method === 8) deflated++;
      else stored++;
      const nameBytes = Buffer.from(name, "utf8");
      const crc = crc32(raw);
      if (raw.length > MAX_32 || offset + body.length > MAX_32) throw new Error("the archive would pass 4 GiB, which needs ZIP64");
      const flags = 1 << 11; // names are UTF-8
      const local = Buffer.alloc(30);
      local.writeUInt32LE(0x04034b50, 0); // local file header signature
      local.writeUInt16LE(20, 4); // version needed to extract: 2.0 (deflate)
      local.writeUInt16LE(flags, 6);
      local.writeUInt16LE(method, 8);
      local.writeUInt16LE(time, 10);
      local.writeUInt16LE(date, 12);
      local.writeUInt32LE(crc, 14);
      local.writeUInt32LE(body.length, 18);
      local.writeUInt32LE(raw.length, 22);
      local.writeUInt16LE(nameBytes.length, 26);
      local.writeUInt16LE(0, 28); // extra field length
      const headerOffset = offset;
      write(local);
      write(nameBytes);
      write(body);
      const record = Buffer.alloc(46);
      record.writeUInt32LE(0x02014b50, 0); // central directory file header signature
      record.writeUInt16LE((3 << 8) | 20, 4); // made by: UNIX, spec 2.0 (so the mode below is read)
      record.writeUInt16LE(20, 6);
      record.writeUInt16LE(flags, 8);
      record.writeUInt16LE(method, 10);
      record.writeUInt16LE(time, 12);
      record.writeUInt16LE(date, 14);
      record.writeUInt32LE(crc, 16);
      record.writeUInt32LE(body.length, 20);
      record.writeUInt32LE(raw.length, 24);
      record.writeUInt16LE(nameBytes.length, 28);
      record.writeUInt16LE(0, 30); // extra field length
      record.writeUInt16LE(0, 32); // comment length
      record.writeUInt16LE(0, 34); // disk number start
      record.writeUInt16LE(0, 36); // internal attributes
      record.writeUInt32LE((0o100644 << 16) >>> 0, 38); // external attributes: a regular file, rw-r--r--
      record.writeUInt32LE(headerOffset, 42);
      central.push(record, nameBytes);
    }
    const centralStart = offset;
    for (const part of central) write(part);
    const centralSize = offset - centralStart;
    const end = Buffer.alloc(22);
    end.writeUInt32LE(0x06054b50, 0); // end of central directory signature
    end.writeUInt16LE(0, 4);
    end.writeUInt16LE(0, 6);
    end.writeUInt16LE(entries.length, 8);
    end.writeUInt16LE(entries.length, 10);
    end.writeUInt32LE(centralSize, 12);
    end.writeUInt32LE(centralStart, 16);
    end.writeUInt16LE(0, 20); // comment length
    write(end);
  } finally {
    fs.closeSync(fd);
  }
  return { entries: entries.length, bytes: offset, stored, deflated };
}

/**
 * The entries of a ZIP file written by writeZip (or any archive without ZIP64, encryption or
 * data descriptors): `{ name, method, crc, size, data }` from the central directory, each body
 * inflated and its CRC checked. For tests.
 */
function readZip(file) {
  const bytes = fs.readFileSync(file);
  const endAt = bytes.lastIndexOf(Buffer.from([0x50, 0x4b, 0x05, 0x06]));
  if (endAt < 0) throw new Error("no end of central directory record");
  const count = bytes.readUInt16LE(endAt + 10);
  let at = bytes.readUInt32LE(endAt + 16);
  const out = [];
  for (let i = 0; i < count; i++) {
    if (bytes.readUInt32LE(at) !== 0x02014b50) throw new Error(`no central directory header at ${at}`);
    const method = bytes.readUInt16LE(at + 10);
    const crc = bytes.readUInt32LE(at + 16);
    const packedSize = bytes.readUInt32LE(at + 20);
    const size = bytes.readUInt32LE(at + 24);
    const nameLength = bytes.readUInt16LE(at + 28);
    const extra = bytes.readUInt16LE(at + 30);
    const comment = bytes.readUInt16LE(at + 32);
    const local = bytes.readUInt32LE(at + 42);
    const name = bytes.toString("utf8", at + 46, at + 46 + nameLength);
    if (bytes.readUInt32LE(local) !== 0x04034b50) throw new Error(`no local header for ${name}`);
    const dataAt = local + 30 + bytes.readUInt16LE(local + 26) + bytes.readUInt16LE(local + 28);
    const body = bytes.subarray(dataAt, dataAt + packedSize);
    const data = method === 8 ? zlib.inflateRawSync(body) : Buffer.from(body);
    if (data.length !== size || crc32(data) !== crc) throw new Error(`${name}: size or CRC does not match`);
    out.push({ name, method, crc, size, data });
    at += 46 + nameLength + extra + comment;
  }
  return out;
}

module.exports = { crc32, writeZip, readZip, dosDateTime };
