import { describe, expect, it } from 'vitest';
import { Bagging, Boosting, type Ensemble, Verdict } from '../../src/ensembles/index.js';
import { mlbench, sklearnReference } from '../support/mlbench.js';
import { note } from '../support/note.js';
import { recordingJournal } from '../support/prequential.js';

/**
 * The default ensemble on open datasets nobody in the project wrote: UCI datasets as shipped in
 * Debian's r-cran-mlbench (exported with Rscript), shuffled with a fixed seed so that the stream is
 * stationary. References from scikit-learn (pinned in .ci/run) over the same row order: GaussianNB run
 * test-then-train (batches of 50) as the incremental reference the ensemble must not fall below by more
 * than 0.01, and a 100-tree random forest on a 70/30 split as the batch ceiling, which a prequential
 * accuracy cannot beat by more than three standard errors of the forest's test accuracy.
 */
const DATASETS = [
  // Frey & Slate, Machine Learning 6, 1991: 20,000 rows, 26 classes, 16 features.
  ['LetterRecognition', 'lettr'],
  // Landsat multispectral scanner (Srinivasan, UCI Statlog): 6,435 rows, 6 classes, 36 features.
  ['Satellite', 'classes'],
  // NASA shuttle (UCI Statlog): 58,000 rows, 7 classes (80% one class), 9 features.
  ['Shuttle', 'Class'],
  // Siebert, Turing Institute (UCI Statlog): 846 vehicle silhouettes, 4 classes, 18 features.
  ['Vehicle', 'Class'],
  // Smith et al. 1988 (UCI): 768 rows, 2 classes, 8 features.
  ['PimaIndiansDiabetes', 'diabetes'],
] as const;

describe('the defaults on real, stationary data', () => {
  for (const [name, label] of DATASETS) {
    it(`${name} (r-cran-mlbench, shuffled): ≤ 2 replacements, accuracy between scikit-learn's references, log-loss below ln C`, () => {
      const data = mlbench(name, label);
      const classes = data.classNames.length;
      const reference = sklearnReference(data);
      const journal = recordingJournal();
      const bagging = new Bagging(data.schema, {}, 1, journal.sink);
      bagging.ensureClasses(classes);
      const verdict = new Verdict();
      let correct = 0;
      let loss = 0;
      for (let i = 0; i < data.length; i++) {
        const y = data.labels[i]!;
        bagging.scoreTrain(data.rows, i * data.width, y, verdict);
        if (verdict.predicted === y) correct++;
        loss -= Math.log(verdict.probabilities[y]!);
      }
      const accuracy = correct / data.length;
      const logLoss = loss / data.length;
      const replacements = journal.records.filter((r) => r.to === 'retired').length;
      const tested = data.length - Math.floor(0.7 * data.length);
      const forestSe = Math.sqrt((reference.forest * (1 - reference.forest)) / tested);
      note(
        `${name}: accuracy ${accuracy.toFixed(4)} (scikit-learn ${reference.version}: GaussianNB ` +
          `test-then-train ${reference.prequential.toFixed(4)}, forest 70/30 ${reference.forest.toFixed(4)}, ` +
          `gap ${(reference.forest - accuracy).toFixed(3)}); log-loss ${logLoss.toFixed(3)} ` +
          `(ln C = ${Math.log(classes).toFixed(3)}); ${replacements} replacements`,
      );
      expect(replacements).toBeLessThanOrEqual(2);
      expect(accuracy).toBeGreaterThanOrEqual(reference.prequential - 0.01);
      expect(accuracy).toBeLessThanOrEqual(reference.forest + 3 * forestSe);
      // Good 1952: the log-loss of always answering 1/C is ln C; calibrated votes must do better.
      expect(logLoss).toBeLessThan(Math.log(classes));
      // A real dataset and scikit-learn's references in a child process: tens of seconds when busy.
    }, 180_000);
  }
});

describe('boosting gives calibrated probabilities', () => {
  // The probabilities are the normalised vote weights of online AdaBoost (Oza & Russell 2001), each
  // member's vote shrunk by its recent accuracy; Good 1952: log-loss must be below ln C, the loss of the
  // uniform answer. Before, a class nobody voted for got probability 0 (log-loss above 8 on real data).
  for (const [name, label] of [
    ['LetterRecognition', 'lettr'],
    ['Satellite', 'classes'],
  ] as const) {
    it(`${name} (r-cran-mlbench, shuffled): boosting's log-loss is below ln C`, () => {
      const data = mlbench(name, label);
      const classes = data.classNames.length;
      const boosting: Ensemble = new Boosting(data.schema, {}, 1);
      boosting.ensureClasses(classes);
      const verdict = new Verdict();
      let loss = 0;
      let correct = 0;
      for (let i = 0; i < data.length; i++) {
        const y = data.labels[i]!;
        boosting.scoreTrain(data.rows, i * data.width, y, verdict);
        loss -= Math.log(verdict.probabilities[y]!);
        if (verdict.predicted === y) correct++;
      }
      note(
        `${name}: boosting log-loss ${(loss / data.length).toFixed(3)} (ln C = ${Math.log(classes).toFixed(3)}), accuracy ${(correct / data.length).toFixed(4)}`,
      );
      expect(loss / data.length).toBeLessThan(Math.log(classes));
      // A real dataset and scikit-learn's references in a child process: tens of seconds when busy.
    }, 180_000);
  }
});
