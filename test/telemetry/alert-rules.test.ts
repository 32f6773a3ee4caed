import { execFile } from 'node:child_process';
import { readFile } from 'node:fs/promises';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';

/**
 * Shoal's alert rules checked the way Prometheus operators check theirs: `promtool check rules`,
 * `promtool check config` and `promtool test rules` (Prometheus's own rule unit-test runner, from
 * Debian's prometheus package). Every alert must have a unit test in which one series fires it and
 * another must not, summary and description annotations, and a runbook entry in the README.
 */
const run = promisify(execFile);
const DIR = 'deploy/prometheus';

interface RuleFile {
  groups: {
    name: string;
    rules: { alert?: string; record?: string; annotations?: Record<string, string> }[];
  }[];
}
interface TestFile {
  tests: {
    input_series: { series: string }[];
    alert_rule_test: { alertname: string; exp_alerts: { exp_labels: Record<string, string> }[] }[];
  }[];
}

async function promtool(...args: string[]): Promise<string> {
  const { stdout, stderr } = await run('promtool', args, { cwd: DIR });
  return stdout + stderr;
}

async function alerts(): Promise<NonNullable<RuleFile['groups'][number]['rules']>> {
  const rules = parse(await readFile(`${DIR}/shoal-alerts.yml`, 'utf8')) as RuleFile;
  return rules.groups.flatMap((g) => g.rules).filter((r) => r.alert !== undefined);
}

describe('deploy/prometheus', () => {
  it('promtool accepts the rules and the scrape configuration', async () => {
    expect(await promtool('check', 'rules', 'shoal-alerts.yml')).toMatch(/SUCCESS: 10 rules found/);
    expect(await promtool('check', 'config', 'prometheus.yml')).toMatch(/is valid prometheus config file/);
  });

  it('every alert passes its promtool unit tests', async () => {
    // promtool exits non-zero (and execFile rejects) when an expected alert is missing or an
    // unexpected one fires.
    expect(await promtool('test', 'rules', 'shoal-alerts.test.yml')).toMatch(/SUCCESS/);
  });

  it('every alert has a test that fires it for one instance and not for another', async () => {
    const tests = parse(await readFile(`${DIR}/shoal-alerts.test.yml`, 'utf8')) as TestFile;
    const names = (await alerts()).map((a) => a.alert!);
    expect(names).toEqual([
      'ShoalConceptDrift',
      'ShoalMemberChurn',
      'ShoalInputDrift',
      'ShoalLabelsStalled',
      'ShoalPendingLabelsNearCap',
      'ShoalNoEvents',
      'ShoalConsumerLagGrowing',
      'ShoalCheckpointStale',
    ]);
    for (const name of names) {
      const cases = tests.tests.filter((t) =>
        t.alert_rule_test.some((a) => a.alertname === name && a.exp_alerts.length > 0),
      );
      expect(cases.length, `${name} has a test that fires it`).toBeGreaterThan(0);
      for (const c of cases) {
        const fired = new Set(
          c.alert_rule_test
            .filter((a) => a.alertname === name)
            .flatMap((a) => a.exp_alerts.map((e) => e.exp_labels.instance ?? '')),
        );
        const fed = new Set(c.input_series.map((s) => /instance="([^"]+)"/.exec(s.series)?.[1]));
        const quiet = [...fed].filter((i) => i !== undefined && !fired.has(i));
        expect(quiet.length, `${name}: a series in the same test that must not fire it`).toBeGreaterThan(0);
      }
    }
  });

  it('every alert has summary and description annotations and a runbook entry in the README', async () => {
    const readme = await readFile('README.md', 'utf8');
    for (const a of await alerts()) {
      expect(a.annotations?.summary, `${a.alert} summary`).toBeTruthy();
      expect(a.annotations?.description, `${a.alert} description`).toMatch(/Runbook: README/);
      const entry = new RegExp(`#### ${a.alert}\\n([\\s\\S]*?)(?=\\n####|\\n## |$)`).exec(readme);
      expect(entry, `${a.alert} runbook entry`).not.toBeNull();
      for (const part of ['What it means', 'What to check', 'What to do'])
        expect(entry![1], `${a.alert}: ${part}`).toContain(`**${part}.**`);
    }
  });
});
