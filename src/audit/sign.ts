/**
 * Signing a JSON audit record with Ed25519 (RFC 8032, through node:crypto) and checking a
 * signature.
 *
 * What is signed is the canonical JSON (canonical.ts) of the record with its `signature`
 * member left out, as UTF-8. The signature is added as one more top-level member:
 *
 *     "signature": {
 *       "algorithm": "ed25519",
 *       "covers": "canonical JSON of the record without \"signature\"",
 *       "publicKey": "-----BEGIN PUBLIC KEY-----\n…",      (SPKI PEM)
 *       "publicKeySha256": "…",                            (SHA-256 of the SPKI DER, hex)
 *       "value": "…"                                       (64 bytes, base64)
 *     }
 *
 * The embedded key lets anyone check that the record is unchanged since it was signed; it
 * does not say who signed it (anyone can make a key). That is what pinning is for: the
 * verifier gives the public key it trusts, and a record signed with another key fails.
 */
import { createPublicKey, generateKeyPairSync, sign, verify, type KeyObject } from 'node:crypto';
import { canonicalJson, findDuplicateKey } from './canonical.js';
import { AuditError } from './findings.js';
import { ed25519PrivateKey, publicKeySha256 } from './keys.js';

export const SIGNATURE_ALGORITHM = 'ed25519';
/** What `signature.covers` says; a verifier refuses a signature that covers anything else. */
export const SIGNATURE_COVERS = 'canonical JSON of the record without "signature"';

export interface RecordSignature {
  algorithm: typeof SIGNATURE_ALGORITHM;
  covers: typeof SIGNATURE_COVERS;
  publicKey: string;
  publicKeySha256: string;
  value: string;
}

export interface KeyPair {
  /** SubjectPublicKeyInfo, PEM. */
  publicKeyPem: string;
  /** PKCS #8, PEM, not encrypted: keep the file private (mode 0600). */
  privateKeyPem: string;
}

/** A new Ed25519 key pair. */
export function generateKeyPair(): KeyPair {
  const { publicKey, privateKey } = generateKeyPairSync('ed25519');
  return {
    publicKeyPem: publicKey.export({ type: 'spki', format: 'pem' }) as string,
    privateKeyPem: privateKey.export({ type: 'pkcs8', format: 'pem' }) as string,
  };
}

/**
 * The record with a `signature` member added at the end. Every byte of the given text
 * before its closing brace is kept, so a signed record diffs against the unsigned one as
 * one added block. Throws AuditError for text that is not a JSON object, a record that is
 * already signed, or a key that is not an Ed25519 private key.
 */
export function signRecord(recordJson: string, privateKeyPem: string): string {
  const record = parseRecord(recordJson, 'The record');
  if (Object.hasOwn(record, 'signature')) throw new AuditError('The record is already signed (it has a "signature" member)');
  const key = ed25519PrivateKey(privateKeyPem, 'The private key');
  const signature: RecordSignature = {
    algorithm: SIGNATURE_ALGORITHM,
    covers: SIGNATURE_COVERS,
    publicKey: publicPem(key),
    publicKeySha256: publicKeySha256(key),
    value: sign(null, Buffer.from(canonicalJson(record), 'utf8'), key).toString('base64'),
  };
  const body = recordJson.trimEnd();
  const head = body.slice(0, -1).trimEnd(); // without the closing brace
  const member = `"signature": ${JSON.stringify(signature, null, 2).replace(/\n/g, '\n  ')}`;
  return `${head}${Object.keys(record).length > 0 ? ',' : ''}\n  ${member}\n}\n`;
}

export type SignatureStatus = 'valid' | 'invalid' | 'unsigned' | 'wrong-key' | 'malformed';

export interface SignatureCheck {
  status: SignatureStatus;
  /** True when a trusted key was given and the record was signed with it. */
  pinned: boolean;
  /** Fingerprint of the key embedded in the record (null when unsigned or unreadable). */
  keySha256: string | null;
  /** Fingerprint of the trusted key, when one was given. */
  trustedKeySha256: string | null;
  message: string;
}

/**
 * Checks a record's signature. With `trustedPublicKeyPem`, the record must be signed with
 * that key (`pinned`); without it, a valid signature proves only that the record is
 * unchanged since someone signed it with the key it embeds. Throws AuditError when the
 * text is not a JSON object (not a record at all).
 */
export function verifySignature(recordText: string, trustedPublicKeyPem?: string | KeyObject): SignatureCheck {
  const record = parseRecord(recordText, 'The record');
  const trustedKeySha256 = trustedPublicKeyPem === undefined ? null : publicKeySha256(trustedPublicKeyPem);
  const result = (status: SignatureStatus, message: string, keySha256: string | null = null, pinned = false): SignatureCheck => ({
    status,
    pinned,
    keySha256,
    trustedKeySha256,
    message,
  });

  const duplicate = findDuplicateKey(recordText);
  if (duplicate) {
    return result(
      'malformed',
      `the record has the key "${duplicate.key}" twice in one object (at character ${duplicate.offset}): ` +
        'a reader may see a value other than the one signed and checked',
    );
  }
  if (!Object.hasOwn(record, 'signature')) return result('unsigned', 'the record is not signed');
  const s = record.signature as Partial<Record<keyof RecordSignature, unknown>> | null;
  if (typeof s !== 'object' || s === null || Array.isArray(s)) return result('malformed', 'the record\'s "signature" is not an object');
  if (s.algorithm !== SIGNATURE_ALGORITHM) return result('malformed', `the signature's algorithm is ${JSON.stringify(s.algorithm)}, not "ed25519"`);
  if (s.covers !== SIGNATURE_COVERS) return result('malformed', `the signature covers ${JSON.stringify(s.covers)}, which this vibgate does not know`);
  if (typeof s.publicKey !== 'string' || typeof s.publicKeySha256 !== 'string' || typeof s.value !== 'string') {
    return result('malformed', 'the signature lacks its publicKey, publicKeySha256 or value');
  }
  let embedded: KeyObject;
  try {
    embedded = ed25519PublicKeyOrThrow(s.publicKey);
  } catch {
    return result('malformed', 'the signature\'s publicKey is not an Ed25519 public key in PEM form');
  }
  const keySha256 = publicKeySha256(embedded);
  if (keySha256 !== s.publicKeySha256) {
    return result('malformed', `the signature's publicKeySha256 ${JSON.stringify(s.publicKeySha256)} is not the fingerprint of its publicKey (${keySha256}): the signature block was edited`, keySha256);
  }
  const value = Buffer.from(s.value, 'base64');
  if (value.length !== 64 || value.toString('base64') !== s.value) {
    return result('malformed', 'the signature value is not 64 bytes of base64', keySha256);
  }
  if (trustedKeySha256 !== null && trustedKeySha256 !== keySha256) {
    return result('wrong-key', `the record was signed with key ${shortKey(keySha256)}, not with the trusted key ${shortKey(trustedKeySha256)}`, keySha256);
  }
  const rest: Record<string, unknown> = { ...record };
  delete rest.signature;
  let signed: Buffer;
  try {
    signed = Buffer.from(canonicalJson(rest), 'utf8');
  } catch (err) {
    return result('malformed', `the record cannot be put in canonical form: ${(err as Error).message}`, keySha256);
  }
  if (!verify(null, signed, embedded, value)) {
    return result('invalid', 'the record was modified after signing (the signature does not match its content)', keySha256);
  }
  if (trustedKeySha256 !== null) return result('valid', `the signature is valid, made with the trusted key ${shortKey(keySha256)}`, keySha256, true);
  return result(
    'valid',
    `the signature is valid for the key embedded in the record (${shortKey(keySha256)}), but that key is not pinned: ` +
      'anyone can sign with a key of their own; give the trusted public key to check who signed it',
    keySha256,
  );
}

/** Key fingerprints are shown a little longer than file hashes: they are compared by eye. */
const shortKey = (hex: string) => `${hex.slice(0, 16)}…`;

function ed25519PublicKeyOrThrow(pem: string): KeyObject {
  // createPublicKey would also accept a private key and derive the public one; an embedded
  // private key is not a public key, whatever it derives to.
  if (!/^-----BEGIN PUBLIC KEY-----/.test(pem.trimStart())) throw new Error('not a public key');
  const key = createPublicKey(pem);
  if (key.asymmetricKeyType !== 'ed25519') throw new Error('not ed25519');
  return key;
}

const publicPem = (key: KeyObject) => createPublicKey(key).export({ type: 'spki', format: 'pem' }) as string;

/** A JSON object, or an AuditError saying what the text is instead. */
export function parseRecord(text: string, what: string): Record<string, unknown> {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (err) {
    throw new AuditError(`${what} is not JSON: ${(err as Error).message}`);
  }
  if (typeof value !== 'object' || value === null || Array.isArray(value)) throw new AuditError(`${what} is not a JSON object`);
  return value as Record<string, unknown>;
}
