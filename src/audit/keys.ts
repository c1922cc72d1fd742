import { createHash, createPrivateKey, createPublicKey, type KeyObject } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { AuditError, fileProblem } from './findings.js';

/**
 * The fingerprint of an Ed25519 public key: SHA-256 (hex) of its DER-encoded
 * SubjectPublicKeyInfo, the bytes inside the PEM's base64, so `openssl pkey -pubin -outform
 * DER | sha256sum` gives the same. Accepts a PEM string or a KeyObject.
 */
export function publicKeySha256(key: string | KeyObject): string {
  const object = typeof key === 'string' ? createPublicKey(key) : key.type === 'private' ? createPublicKey(key) : key;
  return createHash('sha256').update(object.export({ type: 'spki', format: 'der' })).digest('hex');
}

/** Parses a PEM private key and insists on Ed25519. `label` names it in messages (`"lab.key"`). */
export function ed25519PrivateKey(pem: string, label: string): KeyObject {
  let key: KeyObject;
  try {
    key = createPrivateKey(pem);
  } catch {
    if (/-----BEGIN PUBLIC KEY-----/.test(pem)) throw new AuditError(`${label} is a public key; signing needs the private key (.key)`);
    throw new AuditError(`${label} is not a PEM private key`);
  }
  if (key.asymmetricKeyType !== 'ed25519') throw new AuditError(`${label} is not an Ed25519 key (it is ${key.asymmetricKeyType ?? 'of an unknown type'})`);
  return key;
}

/** Parses a PEM public key and insists on Ed25519. A private key is refused, not derived from. */
export function ed25519PublicKey(pem: string, label: string): KeyObject {
  if (/-----BEGIN [A-Z ]*PRIVATE KEY-----/.test(pem)) {
    throw new AuditError(`${label} is a private key; give the public key (.pub): the private key should stay where records are signed`);
  }
  let key: KeyObject;
  try {
    key = createPublicKey(pem);
  } catch {
    throw new AuditError(`${label} is not a PEM public key`);
  }
  if (key.asymmetricKeyType !== 'ed25519') throw new AuditError(`${label} is not an Ed25519 key (it is ${key.asymmetricKeyType ?? 'of an unknown type'})`);
  return key;
}

/** Reads a key file's text; a file that cannot be read is an AuditError naming it. */
export async function readKeyFile(path: string, display: string): Promise<string> {
  try {
    return await readFile(path, 'utf8');
  } catch (err) {
    throw new AuditError(`Cannot read the key "${display}": ${fileProblem(err)}`);
  }
}
