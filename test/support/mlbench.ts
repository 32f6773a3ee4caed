import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { type FeatureSchema, numeric, Rng } from '../../src/core/index.js';

/**
 * Open datasets from Debian's `r-cran-mlbench` (Leisch & Dimitriadou, the R package mlbench, which
 * ships copies of UCI Machine Learning Repository datasets), exported with `Rscript` at test time and
 * shuffled with a fixed seed so that the stream is stationary. `.ci/run` installs the package.
 */
export interface Dataset {
  readonly name: string;
  readonly schema: FeatureSchema;
  /** Row-major features, `width` per row, in shuffled order. */
  readonly rows: Float64Array;
  readonly labels: Int32Array;
  readonly classNames: readonly string[];
  readonly width: number;
  readonly length: number;
}

const cache = new Map<string, Dataset>();

/**
 * Export mlbench dataset `name` (all features numeric; the class in column `label`), shuffled with
 * `seed`. Rows with a missing value are kept; NA becomes NaN.
 */
export function mlbench(name: string, label: string, seed = 11): Dataset {
  const key = `${name}/${label}/${seed}`;
  const cached = cache.get(key);
  if (cached !== undefined) return cached;
  const dir = mkdtempSync(join(tmpdir(), 'shoal-mlbench-'));
  try {
    const file = join(dir, `${name}.csv`);
    const script =
      `suppressMessages(library(mlbench)); data(${name}); d <- ${name}; ` +
      `y <- as.character(d[["${label}"]]); x <- d[, names(d) != "${label}", drop = FALSE]; ` +
      `x[] <- lapply(x, function(v) as.numeric(as.character(v))); ` +
      `write.table(cbind(label = y, x), "${file}", sep = ",", row.names = FALSE, col.names = TRUE, quote = FALSE)`;
    execFileSync('Rscript', ['-e', script], { stdio: ['ignore', 'ignore', 'pipe'] });
    const lines = readFileSync(file, 'utf8').trim().split('\n');
    const header = lines[0]!.split(',');
    const width = header.length - 1;
    const body = lines.slice(1).map((line) => line.split(','));
    const classNames = [...new Set(body.map((cells) => cells[0]!))].sort();
    const order = Int32Array.from({ length: body.length }, (_, i) => i);
    new Rng(seed).shuffle(order);
    const rows = new Float64Array(body.length * width);
    const labels = new Int32Array(body.length);
    order.forEach((from, i) => {
      const cells = body[from]!;
      labels[i] = classNames.indexOf(cells[0]!);
      for (let j = 0; j < width; j++) {
        const text = cells[j + 1]!;
        rows[i * width + j] = text === 'NA' ? Number.NaN : Number(text);
      }
    });
    const data: Dataset = {
      name,
      schema: { features: header.slice(1).map((h) => numeric(h)) },
      rows,
      labels,
      classNames,
      width,
      length: body.length,
    };
    cache.set(key, data);
    return data;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/** What scikit-learn makes of a dataset in the same row order (see sklearn_reference.py). */
export interface SklearnReference {
  readonly version: string;
  /** GaussianNB, test-then-train in batches of 50 rows. */
  readonly prequential: number;
  /** A 100-tree random forest fitted on the first 70% of the rows, scored on the last 30%. */
  readonly forest: number;
}

/** Run scikit-learn (installed by `.ci/run`, version pinned there) over `data` in its shuffled order. */
export function sklearnReference(data: Dataset): SklearnReference {
  const dir = mkdtempSync(join(tmpdir(), 'shoal-sklearn-'));
  try {
    const file = join(dir, `${data.name}.csv`);
    const lines: string[] = [];
    for (let i = 0; i < data.length; i++) {
      const cells = [String(data.labels[i])];
      for (let j = 0; j < data.width; j++) {
        const v = data.rows[i * data.width + j]!;
        cells.push(Number.isNaN(v) ? 'nan' : String(v));
      }
      lines.push(cells.join(','));
    }
    writeFileSync(file, `${lines.join('\n')}\n`);
    const script = fileURLToPath(new URL('./sklearn_reference.py', import.meta.url));
    const out = execFileSync('python3', [script, file], {
      encoding: 'utf8',
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    return JSON.parse(out) as SklearnReference;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
