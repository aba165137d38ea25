import { createHash, randomBytes, timingSafeEqual } from 'node:crypto';
import type { NextFunction, Request, Response } from 'express';
import { ApiError } from './errors.js';

/** A client's role: `admin` may also manage rule sets and reprocess batches. */
export type Role = 'client' | 'admin';

/** A configured API key: only its sha256 is kept. */
export interface ApiKeyEntry {
  clientId: string;
  role: Role;
  /** Hex sha256 of the key. */
  hash: string;
}

/** The authenticated caller of a request. */
export interface Principal {
  clientId: string;
  role: Role;
}

/** Hex sha256 of an API key, as configured in `API_KEYS`. */
export function hashApiKey(key: string): string {
  return createHash('sha256').update(key, 'utf8').digest('hex');
}

/** A new random API key (`pk_` + 32 random bytes, base64url). */
export function newApiKey(): string {
  return `pk_${randomBytes(32).toString('base64url')}`;
}

/**
 * Finds the client of a presented key. The key is hashed and compared with every configured hash in
 * constant time (no early exit), so timing tells nothing about which keys exist.
 */
export function findClient(keys: readonly ApiKeyEntry[], presented: string): Principal | null {
  const h = Buffer.from(hashApiKey(presented), 'hex');
  let found: ApiKeyEntry | null = null;
  for (const k of keys) {
    const match = timingSafeEqual(h, Buffer.from(k.hash, 'hex'));
    if (match && !found) found = k;
  }
  return found ? { clientId: found.clientId, role: found.role } : null;
}

declare module 'express-serve-static-core' {
  interface Request {
    principal?: Principal;
  }
}

/** Requires `Authorization: Bearer <key>`; sets `req.principal`. */
export function authenticate(keys: readonly ApiKeyEntry[]) {
  return (req: Request, _res: Response, next: NextFunction): void => {
    const h = req.get('authorization');
    const m = h ? /^Bearer\s+(\S{8,512})\s*$/i.exec(h) : null;
    const challenge = { 'WWW-Authenticate': 'Bearer realm="peel"' };
    if (!m) {
      next(
        new ApiError('unauthorized', 'send an API key as "Authorization: Bearer <key>"', {
          headers: challenge,
        }),
      );
      return;
    }
    const principal = findClient(keys, m[1]!);
    if (!principal) {
      next(new ApiError('unauthorized', 'the API key is not valid', { headers: challenge }));
      return;
    }
    req.principal = principal;
    next();
  };
}

/** Requires the admin role. */
export function requireAdmin(req: Request, _res: Response, next: NextFunction): void {
  if (req.principal?.role !== 'admin') next(new ApiError('forbidden', 'this endpoint needs an admin key'));
  else next();
}

/** The authenticated principal (after {@link authenticate}). */
export function principal(req: Request): Principal {
  if (!req.principal) throw new ApiError('unauthorized', 'not authenticated');
  return req.principal;
}
