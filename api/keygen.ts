#!/usr/bin/env node
// Makes an API key: prints the key once (give it to the client) and the `API_KEYS` entry (its hash) for the
// service's configuration. Usage: node dist/api/keygen.js CLIENT_ID [--admin]
import { hashApiKey, newApiKey } from './auth.js';

const [clientId, ...rest] = process.argv.slice(2);
if (!clientId || !/^[A-Za-z0-9_.-]{1,64}$/.test(clientId)) {
  console.error('usage: node dist/api/keygen.js CLIENT_ID [--admin]   (CLIENT_ID: letters, digits, _ . -)');
  process.exitCode = 2;
} else {
  const role = rest.includes('--admin') ? 'admin' : 'client';
  const key = newApiKey();
  console.log(`key (give to the client; it is not stored):  ${key}`);
  console.log(`API_KEYS entry (configure the service):     ${clientId}:${role}:${hashApiKey(key)}`);
}
