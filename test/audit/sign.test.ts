import { describe, expect, it } from 'vitest';
import { createHash, createPrivateKey, createPublicKey, generateKeyPairSync, sign, verify } from 'node:crypto';
import { generateKeyPair, signRecord, verifySignature, SIGNATURE_COVERS } from '../../src/audit/sign.js';
import { AuditError } from '../../src/audit/findings.js';

// RFC 8032 §7.1, TEST 1 (from memory; the first test checks it against node:crypto).
const RFC8032_SECRET = '9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60';
const RFC8032_PUBLIC = 'd75a980182b10ab7d54bfed3c964073a0ee172f3daa62325af021a68f707511a';
const RFC8032_SIGNATURE_OF_EMPTY =
  'e5564300c360ac729086e2cc806e828a84877f1eb8e5d974d873e065224901555fb8821590a33bacc61e39701cf9b46bd25bf5f0595bbe24655141438e7a100b';
// DER prefixes of an Ed25519 PKCS #8 private key and SPKI public key (RFC 8410), from memory.
const PKCS8_PREFIX = '302e020100300506032b657004220420';
const SPKI_PREFIX = '302a300506032b6570032100';

const vectorPrivate = createPrivateKey({ key: Buffer.from(PKCS8_PREFIX + RFC8032_SECRET, 'hex'), format: 'der', type: 'pkcs8' });
const vectorPrivatePem = vectorPrivate.export({ type: 'pkcs8', format: 'pem' }) as string;
const vectorPublic = createPublicKey({ key: Buffer.from(SPKI_PREFIX + RFC8032_PUBLIC, 'hex'), format: 'der', type: 'spki' });
const vectorPublicPem = vectorPublic.export({ type: 'spki', format: 'pem' }) as string;

const record = '{\n  "b": 2,\n  "a": [1, { "d": true, "c": "x" }],\n  "verdict": "fail"\n}\n';
// what canonical JSON of `record` must be, written out by hand
const recordCanonical = '{"a":[1,{"c":"x","d":true}],"b":2,"verdict":"fail"}';

describe('signRecord()', () => {
  it('uses keys that reproduce RFC 8032 test 1 through node:crypto', () => {
    expect(sign(null, Buffer.alloc(0), vectorPrivate).toString('hex')).toBe(RFC8032_SIGNATURE_OF_EMPTY);
    expect(createPublicKey(vectorPrivate).export({ type: 'spki', format: 'der' }).toString('hex')).toBe(SPKI_PREFIX + RFC8032_PUBLIC);
  });

  it('adds an Ed25519 signature over the canonical JSON, with the public key and its SHA-256', () => {
    const signed = JSON.parse(signRecord(record, vectorPrivatePem));
    expect(signed.signature).toMatchObject({ algorithm: 'ed25519', covers: SIGNATURE_COVERS });
    // the fingerprint is the SHA-256 of the SPKI DER (RFC 8410 layout above)
    expect(signed.signature.publicKeySha256).toBe(createHash('sha256').update(Buffer.from(SPKI_PREFIX + RFC8032_PUBLIC, 'hex')).digest('hex'));
    expect(createPublicKey(signed.signature.publicKey).export({ type: 'spki', format: 'der' }).toString('hex')).toBe(SPKI_PREFIX + RFC8032_PUBLIC);
    // node:crypto accepts the signature over the hand-written canonical form
    expect(verify(null, Buffer.from(recordCanonical), vectorPublic, Buffer.from(signed.signature.value, 'base64'))).toBe(true);
    // and equals node's own signature of it (Ed25519 signatures are deterministic, RFC 8032 §5.1.6)
    expect(signed.signature.value).toBe(sign(null, Buffer.from(recordCanonical), vectorPrivate).toString('base64'));
  });

  it('keeps every byte of the record before its closing brace', () => {
    const signed = signRecord(record, vectorPrivatePem);
    expect(signed.startsWith(record.trimEnd().slice(0, -1).trimEnd() + ',\n  "signature": {\n    "algorithm": "ed25519",')).toBe(true);
    expect(signed.endsWith('\n  }\n}\n')).toBe(true);
    expect(signRecord(record, vectorPrivatePem)).toBe(signed);
  });

  it('signs an empty object without a stray comma', () => {
    expect(JSON.parse(signRecord('{}', vectorPrivatePem)).signature.algorithm).toBe('ed25519');
  });

  it.each([
    ['text that is not JSON', 'nope', vectorPrivatePem, /^The record is not JSON: /],
    ['an array', '[1]', vectorPrivatePem, /^The record is not a JSON object$/],
    ['a public key', record, vectorPublicPem, /^The private key is a public key; signing needs the private key \(\.key\)$/],
    [
      'an RSA key',
      record,
      generateKeyPairSync('rsa', { modulusLength: 1024 }).privateKey.export({ type: 'pkcs8', format: 'pem' }) as string,
      /^The private key is not an Ed25519 key \(it is rsa\)$/,
    ],
  ])('refuses %s', (_, text, key, message) => {
    expect(() => signRecord(text, key)).toThrow(AuditError);
    expect(() => signRecord(text, key)).toThrow(message);
  });

  it('refuses a record that is already signed', () => {
    expect(() => signRecord(signRecord(record, vectorPrivatePem), vectorPrivatePem)).toThrow('The record is already signed (it has a "signature" member)');
  });
});

describe('verifySignature()', () => {
  const signed = signRecord(record, vectorPrivatePem);
  const fingerprint = createHash('sha256').update(Buffer.from(SPKI_PREFIX + RFC8032_PUBLIC, 'hex')).digest('hex');

  it('says a signature is valid but not pinned when no trusted key is given', () => {
    const check = verifySignature(signed);
    expect(check).toMatchObject({ status: 'valid', pinned: false, keySha256: fingerprint, trustedKeySha256: null });
    expect(check.message).toBe(
      `the signature is valid for the key embedded in the record (${fingerprint.slice(0, 16)}…), but that key is not pinned: ` +
        'anyone can sign with a key of their own; give the trusted public key to check who signed it',
    );
  });

  it('pins the key when the trusted key is given', () => {
    expect(verifySignature(signed, vectorPublicPem)).toMatchObject({
      status: 'valid',
      pinned: true,
      message: `the signature is valid, made with the trusted key ${fingerprint.slice(0, 16)}…`,
    });
  });

  it('still verifies after re-indenting and reordering keys (what is signed is the canonical form)', () => {
    const parsed = JSON.parse(signed);
    const reordered = JSON.stringify({ signature: parsed.signature, verdict: parsed.verdict, a: parsed.a, b: parsed.b });
    expect(verifySignature(reordered, vectorPublicPem).status).toBe('valid');
  });

  it('says the record was modified after signing when a value changed', () => {
    const edited = signed.replace('"verdict": "fail"', '"verdict": "pass"');
    expect(edited).not.toBe(signed);
    expect(verifySignature(edited, vectorPublicPem)).toMatchObject({
      status: 'invalid',
      message: 'the record was modified after signing (the signature does not match its content)',
    });
  });

  it('names both keys when the record was signed with another key', () => {
    const other = generateKeyPair();
    const otherFingerprint = createHash('sha256').update(createPublicKey(other.publicKeyPem).export({ type: 'spki', format: 'der' })).digest('hex');
    const check = verifySignature(signRecord(record, other.privateKeyPem), vectorPublicPem);
    expect(check).toMatchObject({ status: 'wrong-key', pinned: false, keySha256: otherFingerprint, trustedKeySha256: fingerprint });
    expect(check.message).toBe(`the record was signed with key ${otherFingerprint.slice(0, 16)}…, not with the trusted key ${fingerprint.slice(0, 16)}…`);
  });

  it('says an unsigned record is unsigned', () => {
    expect(verifySignature(record)).toMatchObject({ status: 'unsigned', message: 'the record is not signed' });
  });

  it('refuses a record re-signed with a swapped-in key but the old value', () => {
    const other = generateKeyPair();
    const theirs = JSON.parse(signRecord(record, other.privateKeyPem)).signature;
    const parsed = JSON.parse(signed);
    parsed.signature.publicKey = theirs.publicKey;
    parsed.signature.publicKeySha256 = theirs.publicKeySha256;
    expect(verifySignature(JSON.stringify(parsed)).status).toBe('invalid');
  });

  it.each([
    ['an edited fingerprint', (s: Record<string, string>) => { s.publicKeySha256 = '0'.repeat(64); }, /^the signature's publicKeySha256 "0{64}" is not the fingerprint of its publicKey/],
    ['another algorithm', (s: Record<string, string>) => { s.algorithm = 'rsa'; }, /^the signature's algorithm is "rsa", not "ed25519"$/],
    ['a short value', (s: Record<string, string>) => { s.value = 'AAAA'; }, /^the signature value is not 64 bytes of base64$/],
    ['a private key in place of the public key', (s: Record<string, string>) => { s.publicKey = vectorPrivatePem; }, /^the signature's publicKey is not an Ed25519 public key in PEM form$/],
  ])('calls a signature with %s malformed', (_, edit, message) => {
    const parsed = JSON.parse(signed);
    edit(parsed.signature);
    const check = verifySignature(JSON.stringify(parsed, null, 2));
    expect(check.status).toBe('malformed');
    expect(check.message).toMatch(message);
  });

  it('refuses a record with a duplicate key that a reader would see first', () => {
    const sneaky = signed.replace('{\n  "b": 2,', '{\n  "verdict": "pass",\n  "b": 2,');
    const check = verifySignature(sneaky, vectorPublicPem);
    expect(check.status).toBe('malformed');
    expect(check.message).toBe(
      `the record has the key "verdict" twice in one object (at character ${sneaky.lastIndexOf('"verdict"')}): ` +
        'a reader may see a value other than the one signed and checked',
    );
  });
});
