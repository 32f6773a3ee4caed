import { describe, expect, it } from 'vitest';
import { ConfigError, ShoalError } from '../../src/core/index.js';
import {
  agrawal,
  buildStream,
  hyperplane,
  led,
  rbf,
  STREAM_NAMES,
  STREAMS,
  type StreamRequest,
  sea,
  sine,
  stagger,
  take,
} from '../../src/streams/index.js';

function configIssues(request: StreamRequest): readonly { path: string; message: string }[] {
  try {
    buildStream(request);
  } catch (e) {
    expect(e).toBeInstanceOf(ConfigError);
    return (e as ConfigError).issues;
  }
  return expect.fail('expected a ConfigError');
}

describe('the stream registry', () => {
  it('builds every listed concept of every generator, by the names a user types', () => {
    expect([...STREAM_NAMES].sort()).toEqual([
      'agrawal',
      'hyperplane',
      'led',
      'rbf',
      'sea',
      'sine',
      'stagger',
    ]);
    for (const name of STREAM_NAMES) {
      const spec = STREAMS[name];
      expect(spec.conceptNames).toContain(spec.defaultConcept);
      const every = 50;
      const stream = buildStream({ generator: name, concepts: spec.conceptNames.join(','), every, seed: 1 });
      expect(stream.name).toBe(name);
      expect(stream.sequence).toEqual(spec.conceptNames);
      expect(stream.changePoints).toEqual(spec.conceptNames.slice(1).map((_, k) => (k + 1) * every));
      const block = take(stream, every * spec.conceptNames.length);
      for (const label of block.labels) expect(label >= 0 && label < stream.classes.length).toBe(true);
    }
  });

  it('reads the command line of the SEA example: --concepts 8,9,7,9.5 --every 25000 --width 0 --noise 0.1', () => {
    const s = buildStream({
      generator: 'sea',
      concepts: '8,9,7,9.5',
      every: 25_000,
      width: 0,
      noise: 0.1,
      seed: 7,
    });
    expect(s.sequence).toEqual(['8', '9', '7', '9.5']);
    expect(s.changePoints).toEqual([25_000, 50_000, 75_000]);
    expect(s.width).toBe(0);
    const fromList = buildStream({
      generator: 'sea',
      concepts: [8, '9', 7, ' 9.50'],
      every: 25_000,
      noise: 0.1,
      seed: 7,
    });
    expect(fromList.sequence).toEqual(s.sequence);
    const a = take(s, 60_000);
    const b = take(fromList, 60_000);
    expect(Buffer.from(a.rows.buffer).equals(Buffer.from(b.rows.buffer))).toBe(true);
  });

  it('uses the default concept and the generator’s own noise when they are left out', () => {
    const s = buildStream({ generator: 'sea', seed: 3 });
    expect(s.sequence).toEqual(['8']);
    expect(s.changePoints).toEqual([]);
  });

  it('passes generator settings through options', () => {
    const s = buildStream({
      generator: 'rbf',
      concepts: '0.001',
      seed: 2,
      options: { features: 4, classes: 3 },
    });
    expect(s.schema.features).toHaveLength(4);
    expect(s.classes).toEqual(['0', '1', '2']);
    const l = buildStream({ generator: 'led', seed: 2, options: { irrelevant: 0 } });
    expect(l.schema.features).toHaveLength(7);
  });
});

describe('buildStream refuses bad requests, naming every bad field', () => {
  it('names an unknown concept by its position', () => {
    const issues = configIssues({ generator: 'sea', concepts: '8,9,x', every: 10, seed: 1 });
    expect(issues).toHaveLength(1);
    expect(`${issues[0]!.path}: ${issues[0]!.message}`).toMatch(/^concepts\[2\]: unknown SEA threshold 'x'/);
    expect(() => buildStream({ generator: 'sea', concepts: '8,9,x', every: 10, seed: 1 })).toThrow(
      /concepts\[2\]: unknown SEA threshold 'x'/,
    );
  });

  const cases: readonly [string, StreamRequest, string, RegExp][] = [
    ['an unknown generator', { generator: 'waves', seed: 1 }, 'generator', /unknown generator 'waves'/],
    [
      'an unknown STAGGER concept',
      { generator: 'stagger', concepts: 'a,d', every: 5, seed: 1 },
      'concepts[1]',
      /STAGGER concept 'd'/,
    ],
    [
      'an Agrawal function out of 1–10',
      { generator: 'agrawal', concepts: '11', seed: 1 },
      'concepts[0]',
      /Agrawal function '11'/,
    ],
    [
      'an unknown sine concept',
      { generator: 'sine', concepts: 'sine3', seed: 1 },
      'concepts[0]',
      /sine concept 'sine3'/,
    ],
    [
      'a SEA threshold out of range',
      { generator: 'sea', concepts: '21', seed: 1 },
      'concepts[0]',
      /SEA threshold '21'/,
    ],
    [
      'a negative hyperplane magnitude',
      { generator: 'hyperplane', concepts: '-0.1', seed: 1 },
      'concepts[0]',
      /drift magnitude/,
    ],
    [
      'an RBF speed above 1',
      { generator: 'rbf', concepts: '2', seed: 1 },
      'concepts[0]',
      /centroid speed '2'/,
    ],
    ['an empty concept list', { generator: 'sea', concepts: [], seed: 1 }, 'concepts', /at least one/],
    ['several concepts without every', { generator: 'sea', concepts: '8,9', seed: 1 }, 'every', /needed/],
    ['a zero period', { generator: 'sea', concepts: '8,9', every: 0, seed: 1 }, 'every', /integer ≥ 1/],
    ['a negative width', { generator: 'sea', width: -5, seed: 1 }, 'width', /≥ 0/],
    ['noise above 1', { generator: 'sea', noise: 1.5, seed: 1 }, 'noise', /\[0, 1\]/],
    ['a bad seed', { generator: 'sea', seed: Number.NaN }, 'seed', /number or a string/],
    [
      'an unknown option',
      { generator: 'sea', seed: 1, options: { speed: 1 } },
      'options.speed',
      /not a setting of sea/,
    ],
    [
      'a non-numeric option',
      { generator: 'hyperplane', seed: 1, options: { features: '10' } },
      'options.features',
      /expected a number/,
    ],
    [
      'an option the generator refuses',
      { generator: 'hyperplane', seed: 1, options: { features: 0 } },
      'options.features',
      /features must be/,
    ],
    [
      'more drifting weights than features',
      { generator: 'hyperplane', seed: 1, options: { features: 3, drifting: 5 } },
      'options.drifting',
      /drifting must be/,
    ],
    [
      'an LED concept beyond the irrelevant attributes',
      { generator: 'led', concepts: '0,4', every: 9, seed: 1, options: { irrelevant: 2 } },
      'concepts[1]',
      /drifting must be/,
    ],
  ];
  for (const [what, request, path, pattern] of cases) {
    it(`${what} → ${path}`, () => {
      const issue = configIssues(request).find((i) => i.path === path);
      expect(issue, JSON.stringify(configIssues(request))).toBeDefined();
      expect(issue!.message).toMatch(pattern);
    });
  }

  it('lists every bad field at once', () => {
    const issues = configIssues({
      generator: 'sea',
      concepts: 'x,9,y',
      width: -1,
      noise: 2,
      seed: 1,
      options: { a: 1 },
    });
    expect(issues.map((i) => i.path)).toEqual([
      'concepts[0]',
      'concepts[2]',
      'every',
      'width',
      'noise',
      'options.a',
    ]);
  });
});

describe('every generator validates its parameters', () => {
  const cases: readonly [string, () => unknown, RegExp][] = [
    ['sea threshold', () => sea({ threshold: 25 }), /sea: threshold/],
    ['sea noise', () => sea({ noise: -0.1 }), /sea: noise/],
    ['stagger concept', () => stagger({ concept: 'd' as 'a' }), /stagger: concept/],
    ['led noise', () => led({ noise: 2 }), /led: noise/],
    ['led irrelevant', () => led({ irrelevant: -1 }), /led: irrelevant/],
    ['led drifting', () => led({ drifting: 8 }), /led: drifting/],
    ['agrawal fn', () => agrawal({ fn: 0 }), /agrawal: fn/],
    ['agrawal fn fraction', () => agrawal({ fn: 1.5 }), /agrawal: fn/],
    ['agrawal perturbation', () => agrawal({ perturbation: 1.1 }), /agrawal: perturbation/],
    ['agrawal noise', () => agrawal({ noise: Number.NaN }), /agrawal: noise/],
    ['hyperplane features', () => hyperplane({ features: 0 }), /hyperplane: features/],
    ['hyperplane drifting', () => hyperplane({ features: 2, drifting: 3 }), /hyperplane: drifting/],
    ['hyperplane magnitude', () => hyperplane({ magnitude: -1 }), /hyperplane: magnitude/],
    ['hyperplane reversal', () => hyperplane({ reversal: 1.5 }), /hyperplane: reversal/],
    ['hyperplane period', () => hyperplane({ period: 0 }), /hyperplane: period/],
    ['hyperplane noise', () => hyperplane({ noise: 3 }), /hyperplane: noise/],
    ['rbf features', () => rbf({ features: 0 }), /rbf: features/],
    ['rbf classes', () => rbf({ classes: 1 }), /rbf: classes/],
    ['rbf centroids', () => rbf({ centroids: 0 }), /rbf: centroids/],
    ['rbf drifting', () => rbf({ centroids: 5, drifting: 6 }), /rbf: drifting/],
    ['rbf speed', () => rbf({ speed: 1.5 }), /rbf: speed/],
    ['rbf noise', () => rbf({ noise: -1 }), /rbf: noise/],
    ['sine curve', () => sine({ curve: 'sine3' as 'sine1' }), /sine: curve/],
    ['sine reversed', () => sine({ reversed: 'yes' as unknown as boolean }), /sine: reversed/],
    ['sine noise', () => sine({ noise: 1.01 }), /sine: noise/],
  ];
  for (const [what, make, pattern] of cases) {
    it(what, () => {
      let thrown: unknown;
      try {
        make();
      } catch (e) {
        thrown = e;
      }
      expect(thrown).toBeInstanceOf(ShoalError);
      expect((thrown as ShoalError).code).toBe('invalid-parameter');
      expect((thrown as ShoalError).message).toMatch(pattern);
    });
  }
});
