import { execFile } from 'node:child_process';
import { access, readdir, readFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import { parse, parseAllDocuments } from 'yaml';

/**
 * The deploy kit (deploy/): every YAML file parses; every file compose refers to exists; the k8s
 * Deployment has liveness and readiness probes on /healthz and /readyz, requests and limits, and a
 * non-root security context; the Deployment, Service and ConfigMap are valid Kubernetes objects by the
 * API's own OpenAPI schemas; the PrometheusRule carries exactly the tested rules file's groups. No
 * container engine or cluster runs in the tests: these check the files, not a running stack (README's
 * *Deploy kit* says what ran under podman).
 */
const DEPLOY = resolve('deploy');
const run = promisify(execFile);
/** kubernetes-validate 1.37.0 (PyPI), in the venv `.ci/run` makes: Kubernetes' OpenAPI schemas, offline. */
const K8S_VALIDATE = resolve('.cache', 'py', 'bin', 'kubernetes-validate');

// biome-ignore lint/suspicious/noExplicitAny: parsed YAML is walked by the keys each check expects
type Doc = Record<string, any>;

async function yamlFiles(dir: string): Promise<string[]> {
  const out: string[] = [];
  for (const e of await readdir(dir, { withFileTypes: true })) {
    const path = join(dir, e.name);
    if (e.isDirectory()) out.push(...(await yamlFiles(path)));
    else if (/\.ya?ml$/.test(e.name)) out.push(path);
  }
  return out;
}

async function load(path: string): Promise<Doc> {
  return parse(await readFile(path, 'utf8')) as Doc;
}

describe('deploy kit', () => {
  it('every YAML file parses', async () => {
    const files = await yamlFiles(DEPLOY);
    expect(files.length).toBeGreaterThanOrEqual(9);
    for (const f of files) {
      const docs = parseAllDocuments(await readFile(f, 'utf8'));
      for (const d of docs) expect(d.errors, f).toEqual([]);
    }
  });

  it('compose: Kafka in KRaft mode, its topics, shoal serve, the demo-stream producer, Prometheus; every file it names exists', async () => {
    const compose = await load(join(DEPLOY, 'compose.yaml'));
    const services = compose.services as Record<string, Doc>;
    expect(Object.keys(services).sort()).toEqual(['demo-stream', 'kafka', 'prometheus', 'shoal', 'topics']);
    expect(services.kafka!.environment.KAFKA_PROCESS_ROLES).toBe('broker,controller');
    expect(services.shoal!.command[0]).toBe('serve');
    // The producer is the npm script the README names, and serve starts only once its topics exist.
    expect(services['demo-stream']!.entrypoint).toEqual(['npm', 'run', 'demo:stream', '--']);
    const scripts = JSON.parse(await readFile(join(DEPLOY, '..', 'package.json'), 'utf8')).scripts;
    expect(scripts['demo:stream']).toBe('node bin/shoal.js demo-stream');
    expect(services.topics!.command).toEqual([
      'demo-stream',
      '--config',
      '/etc/shoal/shoal.yaml',
      '--create-only',
    ]);
    expect(services.shoal!.depends_on.topics.condition).toBe('service_completed_successfully');
    const paths: string[] = [];
    for (const s of Object.values(services)) {
      if (s.build !== undefined) {
        paths.push(join(DEPLOY, s.build.context));
        paths.push(join(DEPLOY, s.build.context, s.build.dockerfile));
      }
      for (const v of (s.volumes ?? []) as string[]) {
        const host = v.split(':')[0]!;
        if (host.startsWith('.') || host.startsWith('/')) paths.push(join(DEPLOY, host));
      }
    }
    expect(paths.length).toBeGreaterThanOrEqual(7);
    for (const p of paths) await expect(access(p), p).resolves.toBeUndefined();
  });

  it('Dockerfile: multi-stage, production dependencies only, runs as a non-root user', async () => {
    const text = await readFile(join(DEPLOY, 'Dockerfile'), 'utf8');
    expect(text.match(/^FROM /gm)?.length).toBeGreaterThanOrEqual(2);
    expect(text).toMatch(/npm ci --omit=dev/);
    const user = text.match(/^USER (\S+)/gm);
    expect(user?.at(-1)).not.toMatch(/root|^USER 0$/);
  });

  it('k8s: probes on /healthz and /readyz, requests and limits, a non-root context; Service and ConfigMap', async () => {
    const deployment = await load(join(DEPLOY, 'k8s', 'deployment.yaml'));
    expect(deployment.kind).toBe('Deployment');
    const pod = deployment.spec.template.spec;
    expect(pod.securityContext.runAsNonRoot).toBe(true);
    expect(pod.securityContext.runAsUser).toBeGreaterThan(0);
    for (const c of pod.containers as Doc[]) {
      expect(c.livenessProbe.httpGet.path).toBe('/healthz');
      expect(c.readinessProbe.httpGet.path).toBe('/readyz');
      for (const k of ['cpu', 'memory']) {
        expect(c.resources.requests[k], k).toBeDefined();
        expect(c.resources.limits[k], k).toBeDefined();
      }
      expect(c.securityContext.allowPrivilegeEscalation).toBe(false);
    }
    const service = await load(join(DEPLOY, 'k8s', 'service.yaml'));
    expect(service.kind).toBe('Service');
    expect(service.spec.selector).toEqual(deployment.spec.selector.matchLabels);
    const config = await load(join(DEPLOY, 'k8s', 'configmap.yaml'));
    // The ConfigMap's configuration is the one compose mounts.
    expect(parse(config.data['shoal.yaml'])).toEqual(await load(join(DEPLOY, 'shoal.yaml')));
  });

  it('k8s: the Deployment, Service and ConfigMap validate strictly against the Kubernetes 1.37 API schemas', async () => {
    // Reference: the Kubernetes API's OpenAPI schemas as bundled by kubernetes-validate 1.37.0 (PyPI);
    // --strict also rejects fields the API does not have, so a misspelt key fails. The PrometheusRule is
    // a custom resource of the Prometheus operator, outside the core API: its content is checked above
    // and below against the rules file promtool tests.
    const files = ['deployment.yaml', 'service.yaml', 'configmap.yaml'].map((f) => join(DEPLOY, 'k8s', f));
    const { stdout, stderr } = await run(K8S_VALIDATE, ['--strict', '-k', '1.37.0', ...files]);
    const out = stdout + stderr;
    for (const f of files) expect(out, f).toContain(`${f} passed for resource`);
    expect(out).not.toMatch(/ERROR|WARN/);
  });

  it("the PrometheusRule's rules equal deploy/prometheus/shoal-alerts.yml's", async () => {
    const rule = await load(join(DEPLOY, 'k8s', 'prometheus-rule.yaml'));
    const file = await load(join(DEPLOY, 'prometheus', 'shoal-alerts.yml'));
    expect(rule.kind).toBe('PrometheusRule');
    expect(rule.spec.groups).toEqual(file.groups);
    expect(rule.spec.groups[0].rules.length).toBe(10);
  });
});
