import { execFileSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import {
  CHECKPOINT_VERSION,
  canonicalJson,
  configFingerprint,
  decodeCheckpoint,
  encodeCheckpoint,
  runCheckpoint,
} from '../../src/checkpoint/index.js';
import { createEnsemble, Verdict } from '../../src/ensembles/index.js';
import { sea } from '../../src/streams/index.js';
import { expectShoalError } from '../support/errors.js';

/** A real session-like snapshot: an ensemble that has learnt from SEA rows (Street & Kim 2001). */
function sample() {
  const gen = sea({}, 3);
  const ensemble = createEnsemble({ kind: 'bagging', members: 3 }, gen.schema, 5);
  const row = new Float64Array(3);
  const v = new Verdict();
  for (let i = 0; i < 500; i++) ensemble.scoreTrain(row, 0, gen.next(row, 0), v);
  const session = { kind: 'test-session', version: 1, state: { ensemble: ensemble.snapshot(), rows: 500 } };
  return runCheckpoint(
    { decoder: { classes: ['0', '1'] }, session, labelTiming: null },
    {
      shoal: '0.1.0',
      fingerprint: configFingerprint({ seed: 5 }),
      createdAt: '2026-12-02T10:00:00.000Z',
    },
  );
}

describe('checkpoint bytes', () => {
  it('round-trip exactly', () => {
    const c = sample();
    const back = decodeCheckpoint(encodeCheckpoint(c), 'a.shoal');
    expect(JSON.stringify(back)).toBe(JSON.stringify(c));
    expect(back.version).toBe(CHECKPOINT_VERSION);
  });

  it('carry the SHA-256 of their body, as sha256sum computes it', () => {
    // SHA-256 as specified in FIPS 180-4, computed by GNU coreutils' sha256sum: an outside implementation.
    const bytes = encodeCheckpoint(sample());
    const end = bytes.indexOf(10);
    const header = bytes.toString('latin1', 0, end);
    const body = bytes.subarray(end + 1);
    const digest = execFileSync('sha256sum', { input: body }).toString().split(' ')[0];
    expect(header).toBe(`shoal-checkpoint v1 bytes=${body.length} sha256=${digest}`);
  });

  it('refuse a flipped byte, a cut-short file, another format version and other files, naming the file', () => {
    const bytes = encodeCheckpoint(sample());
    const end = bytes.indexOf(10);
    for (const at of [end + 1, end + 1000, bytes.length - 2]) {
      const flipped = Buffer.from(bytes);
      flipped[at]! ^= 0x04;
      expectShoalError(
        () => decodeCheckpoint(flipped, 'f.shoal'),
        'invalid-snapshot',
        /f\.shoal: checksum mismatch/,
      );
    }
    expectShoalError(
      () => decodeCheckpoint(bytes.subarray(0, bytes.length - 100), 'c.shoal'),
      'invalid-snapshot',
      new RegExp(`c\\.shoal: cut short: ${bytes.length - end - 101} of ${bytes.length - end - 1} bytes`),
    );
    expectShoalError(
      () => decodeCheckpoint(bytes.subarray(0, 20), 'h.shoal'),
      'invalid-snapshot',
      /h\.shoal: cut short within its header/,
    );
    const v2 = Buffer.from(
      bytes.toString('latin1').replace('shoal-checkpoint v1 ', 'shoal-checkpoint v2 '),
      'latin1',
    );
    expectShoalError(
      () => decodeCheckpoint(v2, 'v.shoal'),
      'invalid-snapshot',
      /v\.shoal: format version 2; this build reads version 1/,
    );
    expectShoalError(
      () => decodeCheckpoint(Buffer.from('{"kind":"run"}\n'), 'j.shoal'),
      'invalid-snapshot',
      /j\.shoal: not a Shoal checkpoint/,
    );
    expectShoalError(
      () => decodeCheckpoint(Buffer.alloc(0), 'e.shoal'),
      'invalid-snapshot',
      /e\.shoal: not a Shoal checkpoint/,
    );
    const longer = Buffer.concat([bytes, Buffer.from('x')]);
    expectShoalError(() => decodeCheckpoint(longer, 'l.shoal'), 'invalid-snapshot', /l\.shoal: 1 bytes more/);
  });

  it('refuse a well-formed file whose envelope is not a run checkpoint', () => {
    const wrong = { ...sample(), kind: 'bagging' } as unknown as ReturnType<typeof sample>;
    expectShoalError(
      () => decodeCheckpoint(encodeCheckpoint(wrong), 'k.shoal'),
      'invalid-snapshot',
      /k\.shoal: expected a run-checkpoint snapshot, got bagging/,
    );
    const noSession = sample();
    const broken = {
      ...noSession,
      state: { ...noSession.state, session: null },
    } as unknown as typeof noSession;
    expectShoalError(
      () => decodeCheckpoint(encodeCheckpoint(broken), 's.shoal'),
      'invalid-snapshot',
      /s\.shoal: state\.session must be an object/,
    );
  });
});

describe('config fingerprint', () => {
  it('is the same however keys are ordered, and differs when a value does', () => {
    const a = { seed: 7, ensemble: { kind: 'bagging', members: 10, lifecycle: { warmup: 100 } } };
    const b = { ensemble: { lifecycle: { warmup: 100 }, members: 10, kind: 'bagging' }, seed: 7 };
    expect(canonicalJson(a)).toBe(
      '{"ensemble":{"kind":"bagging","lifecycle":{"warmup":100},"members":10},"seed":7}',
    );
    expect(configFingerprint(b)).toBe(configFingerprint(a));
    expect(configFingerprint({ ...a, seed: 8 })).not.toBe(configFingerprint(a));
    // SHA-256 of the canonical text, as sha256sum (GNU coreutils) computes it (FIPS 180-4).
    const outside = execFileSync('sha256sum', { input: canonicalJson(a) })
      .toString()
      .split(' ')[0];
    expect(configFingerprint(a)).toBe(outside);
  });
});
