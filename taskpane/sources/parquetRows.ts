/**
 * A Parquet file read in the page, row group by row group, by hyparquet (a general-purpose
 * JavaScript Parquet reader, MIT): the pane's Parquet route. DuckDB compiled to WebAssembly reads
 * Parquet only through an extension it would download from the internet, which the add-in may
 * not do; hyparquet reads the file the user picked, in place (File.slice), and nothing is fetched.
 *
 * - `openParquet(buffer, name)`: the file's footer (schema, row groups, compression) → its
 *   columns, with their types in DuckDB's words (so the pane's column lists, the plan's checks and
 *   the messages are those of the CSV route), and a `RowSource` (engine/sumsScan.ts) that reads
 *   the used columns one row group at a time: memory holds one row group of those columns.
 * - Compressions: uncompressed and SNAPPY (DuckDB's and most writers' default) are read; a file
 *   whose used columns use another (GZIP, ZSTD, …) is refused before any reading, in one line.
 * - Dates and times arrive as seconds since 1970 (as DuckDB's epoch()): they only order time
 *   blocks, or label blocks.
 * - Errors are one line naming the file and saying what to fix (`parquetProblem`).
 *
 * This module is loaded by a dynamic import (its own chunk), only when a Parquet file is picked.
 */
import { parquetMetadataAsync, parquetSchema, parquetScan, type AsyncBuffer, type FileMetaData, type ParquetParsers, type SchemaElement, type SchemaTree } from "hyparquet";
import { CancelledError, InputError } from "../../engine/errors";
import type { ColumnBatch, RowSource } from "../../engine/sumsScan";

/** Compressions hyparquet reads without extra decompressors. */
export const READABLE_CODECS: readonly string[] = ["UNCOMPRESSED", "SNAPPY"];

/** A picked file as hyparquet reads it: slices on demand, never the whole file at once. */
export function bufferOfBlob(blob: Blob): AsyncBuffer {
  return { byteLength: blob.size, slice: (start, end) => blob.slice(start, end).arrayBuffer() };
}

/** Times as seconds since 1970, as DuckDB's epoch() (dates: days × 86400). */
const PARSERS: Partial<ParquetParsers> = {
  timestampFromMilliseconds: (millis: bigint) => Number(millis) / 1e3,
  timestampFromMicroseconds: (micros: bigint) => Number(micros) / 1e6,
  timestampFromNanoseconds: (nanos: bigint) => Number(nanos) / 1e9,
  dateFromDays: (days: number) => days * 86400,
};

/** A top-level column's type in DuckDB's words (what DESCRIBE would say of read_parquet). */
export function duckdbTypeOf(node: SchemaTree): string {
  const e: SchemaElement = node.element;
  if (node.children.length > 0 || e.repetition_type === "REPEATED") {
    return e.converted_type === "LIST" || e.logical_type?.type === "LIST" ? "LIST" : e.converted_type === "MAP" || e.logical_type?.type === "MAP" ? "MAP" : "STRUCT";
  }
  const logical = e.logical_type;
  const converted = e.converted_type;
  if (logical?.type === "DECIMAL" || converted === "DECIMAL") {
    const precision = logical?.type === "DECIMAL" ? logical.precision : (e.precision ?? 18);
    const scale = logical?.type === "DECIMAL" ? logical.scale : (e.scale ?? 0);
    return `DECIMAL(${precision},${scale})`;
  }
  if (logical?.type === "TIMESTAMP" || converted === "TIMESTAMP_MILLIS" || converted === "TIMESTAMP_MICROS" || e.type === "INT96") return "TIMESTAMP";
  if (logical?.type === "DATE" || converted === "DATE") return "DATE";
  if (logical?.type === "TIME" || converted === "TIME_MILLIS" || converted === "TIME_MICROS") return "TIME";
  if (logical?.type === "INTEGER") {
    const names: Record<number, string> = { 8: "TINYINT", 16: "SMALLINT", 32: "INTEGER", 64: "BIGINT" };
    return `${logical.isSigned ? "" : "U"}${names[logical.bitWidth] ?? "BIGINT"}`;
  }
  const byConverted: Partial<Record<string, string>> = {
    INT_8: "TINYINT",
    INT_16: "SMALLINT",
    INT_32: "INTEGER",
    INT_64: "BIGINT",
    UINT_8: "UTINYINT",
    UINT_16: "USMALLINT",
    UINT_32: "UINTEGER",
    UINT_64: "UBIGINT",
    UTF8: "VARCHAR",
    ENUM: "VARCHAR",
    JSON: "JSON",
  };
  if (converted && byConverted[converted]) return byConverted[converted] as string;
  if (logical?.type === "STRING" || logical?.type === "ENUM") return "VARCHAR";
  if (logical?.type === "FLOAT16") return "FLOAT";
  switch (e.type) {
    case "BOOLEAN":
      return "BOOLEAN";
    case "INT32":
      return "INTEGER";
    case "INT64":
      return "BIGINT";
    case "FLOAT":
      return "FLOAT";
    case "DOUBLE":
      return "DOUBLE";
    default:
      return "BLOB";
  }
}

function messageOf(error: unknown): string {
  if (error && typeof error === "object" && typeof (error as { message?: unknown }).message === "string") return (error as { message: string }).message;
  return String(error);
}

/**
 * A reading failure as one line naming the file (the engine's input errors and a cancel pass
 * through as they are).
 */
export function parquetProblem(error: unknown, fileName: string): Error {
  if (error instanceof InputError || error instanceof CancelledError) return error;
  const text = messageOf(error).replace(/\s+/g, " ").trim();
  const quoted = `'${fileName}'`;
  const codec = /unsupported compression codec: (\w+)/i.exec(text);
  if (codec) return unreadableCodec(fileName, codec[1]);
  if (/NotReadableError|NotFoundError|could not be read|permission/i.test(text)) {
    return new InputError("empty", `${quoted} can't be opened: choose the file again (it may have moved or be open in another program)`);
  }
  return new InputError("empty", `${quoted} can't be read as Parquet (${text.slice(0, 120)}): check that it is a Parquet file, or save it again`);
}

function unreadableCodec(fileName: string, codec: string): InputError {
  return new InputError(
    "empty",
    `'${fileName}' is compressed with ${codec}, which this pane does not read (it reads uncompressed and SNAPPY Parquet): save it again with SNAPPY compression, or fit it with the command line (npm run fit -- ${fileName} --target …)`,
  );
}

/** An opened Parquet file: its columns and a row source over them. */
export interface ParquetRows extends RowSource {
  /** Columns in file order with their DuckDB type names. */
  readonly columns: readonly { name: string; type: string }[];
  /** Rows in the file. */
  readonly rows: number;
}

/**
 * Opens a Parquet file (reads its footer only). Rejects with a one-line InputError for a file
 * that is not Parquet or has no columns.
 */
export async function openParquet(buffer: AsyncBuffer, name: string): Promise<ParquetRows> {
  let metadata: FileMetaData;
  let tree: SchemaTree;
  try {
    metadata = await parquetMetadataAsync(buffer, { parsers: PARSERS });
    tree = parquetSchema(metadata);
  } catch (error) {
    throw parquetProblem(error, name);
  }
  const columns = tree.children.map((node) => ({ name: node.element.name, type: duckdbTypeOf(node) }));
  if (columns.length === 0) throw new InputError("empty", `'${name}' has no columns`);
  const types = new Map(columns.map((c) => [c.name, c.type]));
  const rows = Number(metadata.num_rows);
  const batches = metadata.row_groups.filter((group) => Number(group.num_rows) > 0).length;
  /** Refuses, before reading, a compression hyparquet can't undo in the columns `used`. */
  const checkCodecs = (used: readonly string[]): void => {
    const wanted = new Set(used);
    for (const group of metadata.row_groups) {
      for (const chunk of group.columns) {
        const meta = chunk.meta_data;
        if (!meta || !wanted.has(meta.path_in_schema[0])) continue;
        if (!READABLE_CODECS.includes(meta.codec)) throw unreadableCodec(name, meta.codec);
      }
    }
  };
  return {
    name,
    types,
    columns,
    rows,
    batches,
    async scan(used: readonly string[], visit: (batch: ColumnBatch) => void): Promise<void> {
      checkCodecs(used);
      let scan: Awaited<ReturnType<typeof parquetScan>>;
      try {
        scan = await parquetScan({ file: buffer, metadata, columns: [...used], parsers: PARSERS, useOffsetIndex: false });
      } catch (error) {
        throw parquetProblem(error, name);
      }
      for (const range of scan.ranges) {
        const data = new Map<string, ArrayLike<unknown>>();
        for (const column of used) {
          let values: ArrayLike<unknown>;
          try {
            values = await scan.readColumn({ column, rowStart: range.rowStart, rowEnd: range.rowEnd });
          } catch (error) {
            throw parquetProblem(error, name);
          }
          if (values.length !== range.rowEnd - range.rowStart) {
            throw new InputError("empty", `'${name}' can't be read as Parquet (column '${column}' has ${values.length} values in rows ${range.rowStart + 1}–${range.rowEnd}): save the file again`);
          }
          data.set(column, values);
        }
        visit({ rows: range.rowEnd - range.rowStart, column: (column) => data.get(column) as ArrayLike<unknown> });
      }
    },
  };
}
