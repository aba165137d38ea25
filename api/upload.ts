import { createHash, type Hash } from 'node:crypto';
import { PassThrough, type Readable, Transform, type TransformCallback } from 'node:stream';
import busboy from 'busboy';
import type { Request } from 'express';
import { ApiError } from './errors.js';

/** An upload being received: the file as a stream (hashed and size-limited as it flows) and its fields. */
export interface Upload {
  /** Form fields that came before the file (multipart), else empty. */
  fields: Record<string, string>;
  filename?: string;
  /** Media type of the file part or body. */
  mimeType: string;
  stream: Readable;
  /** sha256 of the fields and file bytes; complete once `stream` has ended. */
  digest(): string;
}

/** Media types accepted as a raw upload body, and the format each names (undefined: sniff the content). */
export const RAW_TYPES: Record<string, 'mgf' | 'mzml' | 'json' | undefined> = {
  'application/x-mgf': 'mgf',
  'chemical/x-mgf': 'mgf',
  'text/x-mgf': 'mgf',
  'application/mzml+xml': 'mzml',
  'application/xml': 'mzml',
  'text/xml': 'mzml',
  'application/x-ndjson': 'json',
  'application/octet-stream': undefined,
  'text/plain': undefined,
  'application/gzip': undefined,
};

/** Passes bytes on while hashing them; fails with a 413 problem past `limit` bytes. */
class Metered extends Transform {
  private n = 0;
  constructor(
    private readonly hash: Hash,
    private readonly limit: number,
  ) {
    super();
  }
  override _transform(chunk: Buffer, _enc: BufferEncoding, cb: TransformCallback): void {
    this.n += chunk.length;
    if (this.n > this.limit) {
      cb(new ApiError('payload-too-large', `the upload is larger than ${this.limit} bytes`));
      return;
    }
    this.hash.update(chunk);
    cb(null, chunk);
  }
}

/** Receives a raw body (`Content-Type` of the file itself) as a stream. */
export function receiveRaw(req: Request, limit: number, salt: string): Upload {
  const declared = Number(req.get('content-length') ?? Number.NaN);
  if (Number.isFinite(declared) && declared > limit) {
    throw new ApiError('payload-too-large', `the upload is larger than ${limit} bytes`);
  }
  const hash = createHash('sha256').update(salt);
  const stream = req.pipe(new Metered(hash, limit));
  req.on('aborted', () => stream.destroy(new ApiError('bad-request', 'the client aborted the upload')));
  let digest: string | undefined;
  return {
    fields: {},
    mimeType: (req.get('content-type') ?? '').split(';')[0]!.trim().toLowerCase(),
    stream,
    digest: () => (digest ??= hash.digest('hex')),
  };
}

/**
 * Receives a multipart/form-data upload with busboy: fields (such as `options`) must come before the one
 * file part (`file`); resolves as soon as the file part starts, so the file is read as it arrives.
 */
export function receiveMultipart(req: Request, limit: number, salt: string): Promise<Upload> {
  return new Promise<Upload>((resolve, reject) => {
    const hash = createHash('sha256').update(salt);
    const fields: Record<string, string> = {};
    let settled = false;
    let current: PassThrough | undefined;
    let bb: busboy.Busboy;
    try {
      bb = busboy({
        headers: req.headers,
        limits: { files: 1, fields: 20, fieldSize: 1 << 20, fileSize: limit, parts: 30 },
      });
    } catch {
      reject(new ApiError('bad-request', 'malformed multipart/form-data (no boundary?)'));
      return;
    }
    const fail = (err: Error) => {
      if (current && !current.writableEnded) current.destroy(err);
      if (!settled) {
        settled = true;
        reject(err);
      }
    };
    bb.on('field', (name, value, info) => {
      if (info.valueTruncated) {
        fail(new ApiError('payload-too-large', `form field "${name}" is too long`));
        return;
      }
      fields[name] = value;
      hash.update(`${name}=${value}\n`);
    });
    bb.on('file', (name, file, info) => {
      if (settled || name !== 'file') {
        file.resume();
        return;
      }
      settled = true;
      const out = new PassThrough();
      current = out;
      file.on('data', (chunk: Buffer) => {
        hash.update(chunk);
        if (!out.write(chunk)) {
          file.pause();
          out.once('drain', () => file.resume());
        }
      });
      file.on('limit', () =>
        out.destroy(new ApiError('payload-too-large', `the file is larger than ${limit} bytes`)),
      );
      file.on('end', () => out.end());
      file.on('error', (err: Error) => out.destroy(err));
      let digest: string | undefined;
      resolve({
        fields,
        filename: info.filename,
        mimeType: info.mimeType,
        stream: out,
        digest: () => (digest ??= hash.digest('hex')),
      });
    });
    bb.on('filesLimit', () => {});
    bb.on('error', (err: Error) => {
      fail(new ApiError('bad-request', `malformed multipart/form-data: ${err.message}`));
    });
    bb.on('close', () => fail(new ApiError('missing-file', 'the form has no part named "file"')));
    req.on('aborted', () => fail(new ApiError('bad-request', 'the client aborted the upload')));
    req.pipe(bb);
  });
}
