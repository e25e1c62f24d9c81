/**
 * The container image recipe, docker-compose.yml and the Kubernetes manifests
 * parse, and agree with each other and with the code: image name and tag,
 * port, probe paths, the environment variables plumbline reads, the config
 * folder's place, and the config in the ConfigMap validating against the
 * current schema. (No container engine runs here; the image is not built.)
 */
import { existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, posix } from 'node:path';
import { parseAllDocuments, parse as parseYaml } from 'yaml';
import { describe, expect, it } from 'vitest';
import { loadConfig } from '../../service/config/load.js';
import { projectPath } from '../../service/paths.js';

const pkg = JSON.parse(readFileSync(projectPath('package.json'), 'utf8')) as { version: string };
const IMAGE = `plumbline:${pkg.version}`;

/** Every PLUMBLINE_* name the service source reads or the example config references. */
function namesInCode(): Set<string> {
  const names = new Set<string>();
  const walk = (dir: string) => {
    for (const entry of readdirSync(dir, { withFileTypes: true })) {
      const path = join(dir, entry.name);
      if (entry.isDirectory()) walk(path);
      else if (/\.(ts|yaml)$/.test(entry.name)) for (const match of readFileSync(path, 'utf8').matchAll(/PLUMBLINE_[A-Z_]+/g)) names.add(match[0]);
    }
  };
  walk(projectPath('service'));
  walk(projectPath('config'));
  return names;
}

/** `${NAME}` and `${NAME:-fallback}` references in a config text; `required` when there is no fallback. */
function references(text: string): Array<{ name: string; required: boolean }> {
  return [...text.matchAll(/\$\{([A-Z_][A-Z0-9_]*)(:-[^}]*)?\}/g)].map((m) => ({ name: m[1]!, required: m[2] === undefined }));
}

interface Instruction {
  stage: number;
  keyword: string;
  args: string;
}

function dockerfile(): Instruction[] {
  const text = readFileSync(projectPath('deploy', 'Dockerfile'), 'utf8');
  const joined = text
    .split('\n')
    .filter((line) => !line.trimStart().startsWith('#'))
    .join('\n')
    .replace(/\\\n/g, ' ');
  let stage = -1;
  return joined
    .split('\n')
    .filter((line) => line.trim() !== '')
    .map((line) => {
      const [, keyword, args] = /^\s*([A-Z]+)\s+(.*)$/.exec(line)!;
      if (keyword === 'FROM') stage++;
      return { stage, keyword: keyword!, args: args!.trim() };
    });
}

interface Container {
  image: string;
  ports: Array<{ name: string; containerPort: number }>;
  env: Array<{ name: string; value?: string; valueFrom?: { secretKeyRef: { name: string; key: string; optional?: boolean } } }>;
  readinessProbe: { httpGet: { path: string; port: string } };
  livenessProbe: { httpGet: { path: string; port: string } };
  startupProbe: { httpGet: { path: string; port: string } };
  securityContext: { readOnlyRootFilesystem: boolean; allowPrivilegeEscalation: boolean };
  volumeMounts: Array<{ name: string; mountPath: string }>;
}

function manifest<T>(file: string): T {
  const documents = parseAllDocuments(readFileSync(projectPath('deploy', 'k8s', file), 'utf8'));
  expect(documents).toHaveLength(1);
  expect(documents[0]!.errors).toEqual([]);
  return documents[0]!.toJS() as T;
}

const deployment = () =>
  manifest<{
    kind: string;
    spec: {
      replicas: number;
      template: {
        spec: {
          terminationGracePeriodSeconds: number;
          securityContext: { runAsNonRoot: boolean; runAsUser: number };
          containers: Container[];
          volumes: Array<{ name: string; configMap?: { name: string; items: Array<{ key: string; path: string }> }; emptyDir?: object }>;
        };
      };
    };
  }>('deployment.yaml');
const configMap = () => manifest<{ kind: string; metadata: { name: string }; data: Record<string, string> }>('configmap.yaml');
const compose = () =>
  parseYaml(readFileSync(projectPath('docker-compose.yml'), 'utf8')) as {
    services: Record<
      string,
      {
        image: string;
        build?: { context: string; dockerfile: string };
        environment?: Record<string, string>;
        ports?: string[];
        volumes?: string[];
        healthcheck?: { test: string[] };
        depends_on?: Record<string, { condition: string }>;
      }
    >;
  };

describe('deploy/Dockerfile', () => {
  const instructions = dockerfile();
  const final = Math.max(...instructions.map((i) => i.stage));
  const inFinal = (keyword: string) => instructions.filter((i) => i.stage === final && i.keyword === keyword).map((i) => i.args);

  it('builds in one stage and runs in a slim Node 20 stage as the non-root node user', () => {
    const froms = instructions.filter((i) => i.keyword === 'FROM').map((i) => i.args);
    expect(froms).toEqual(['node:20-bookworm-slim AS build', 'node:20-bookworm-slim AS runtime']);
    expect(inFinal('USER')).toEqual(['node']);
    expect(inFinal('RUN').some((run) => run.includes('npm ci --omit=dev'))).toBe(true);
    expect(inFinal('RUN').some((run) => run.includes('fonts-dejavu-core'))).toBe(true);
    expect(inFinal('CMD')).toEqual(['["node", "bin/plumbline.js", "serve", "--host", "0.0.0.0"]']);
  });

  it('exposes the configured port and checks health on it', () => {
    const port = loadConfig(projectPath('config'), { env: {} }).main.http.port;
    expect(inFinal('EXPOSE')).toEqual([String(port)]);
    expect(inFinal('HEALTHCHECK')[0]).toContain(`http://127.0.0.1:${port}/healthz`);
  });

  it('copies what exists, including the migrations the service reads at start', () => {
    const copies = instructions.filter((i) => i.keyword === 'COPY' && !i.args.startsWith('--from'));
    for (const copy of copies) {
      for (const source of copy.args.split(/\s+/).slice(0, -1)) expect(existsSync(projectPath(source)), source).toBe(true);
    }
    expect(inFinal('COPY')).toContain('service/db/migrations service/db/migrations');
    expect(inFinal('COPY')).toContain('--from=build /app/dist dist');
    expect(inFinal('WORKDIR')).toEqual(['/app']);
  });

  it('.dockerignore keeps the sources the build needs', () => {
    const ignored = readFileSync(projectPath('.dockerignore'), 'utf8')
      .split('\n')
      .map((line) => line.trim())
      .filter((line) => line !== '' && !line.startsWith('#'));
    for (const needed of ['service', 'checks', 'config', 'bin', 'package.json', 'package-lock.json', 'tsconfig.json', 'tsconfig.build.json']) {
      const matches = (pattern: string) => new RegExp(`^${pattern.replace(/[.+?^${}()|[\]\\]/g, '\\$&').replaceAll('*', '[^/]*')}$`).test(needed);
      expect(ignored.filter(matches), needed).toEqual([]);
    }
    expect(ignored).toEqual(expect.arrayContaining(['node_modules', 'dist', '.plumbline', '.git']));
  });
});

describe('docker-compose.yml', () => {
  const { services } = compose();
  const app = services.plumbline!;

  it('runs PostgreSQL 15, a mail catcher and plumbline built from deploy/Dockerfile', () => {
    expect(Object.keys(services).sort()).toEqual(['mailpit', 'plumbline', 'postgres']);
    expect(services.postgres!.image).toBe('postgres:15');
    expect(services.mailpit!.image).toMatch(/^axllent\/mailpit:/);
    expect(app.build).toEqual({ context: '.', dockerfile: 'deploy/Dockerfile' });
    expect(app.image).toBe(IMAGE);
    expect(app.depends_on).toEqual({ postgres: { condition: 'service_healthy' }, mailpit: { condition: 'service_started' } });
  });

  it('wires the databases, SMTP and the port to what the config and the code read', () => {
    const env = app.environment!;
    const known = namesInCode();
    for (const name of Object.keys(env)) expect(known.has(name), name).toBe(true);
    const configText = readFileSync(projectPath('config', 'plumbline.yaml'), 'utf8');
    for (const { name } of references(configText).filter((r) => r.name !== 'PLUMBLINE_CHAT_WEBHOOK')) expect(env[name], name).toBeTruthy();
    expect(new URL(env.PLUMBLINE_STATE_URL!).host).toBe('postgres:5432');
    expect(new URL(env.PLUMBLINE_SMTP_URL!).host).toBe('mailpit:1025');
    const port = loadConfig(projectPath('config'), { env: {} }).main.http.port;
    expect(app.ports).toEqual([`127.0.0.1:${port}:${port}`]);
    expect(app.healthcheck!.test.join(' ')).toContain(`http://127.0.0.1:${port}/readyz`);
    expect(app.volumes).toContain('./config:/app/config:ro');
  });

  it('initialises PostgreSQL with the events table the example config maps', () => {
    const init = services.postgres!.volumes!.find((volume) => volume.includes('docker-entrypoint-initdb.d'))!;
    const file = init.split(':')[0]!;
    const sql = readFileSync(projectPath(file), 'utf8');
    const main = loadConfig(projectPath('config'), { env: {} }).main;
    expect(sql).toContain(`create table ${main.warehouse.events_table} (`);
    for (const column of [...Object.values(main.warehouse.columns), ...main.warehouse.dimensions]) expect(sql).toMatch(new RegExp(`\\n  ${column} `));
  });
});

describe('deploy/k8s', () => {
  it('every manifest parses, and the kustomization lists the ones that exist and renames the image', () => {
    const kustomization = manifest<{ resources: string[]; images: Array<{ name: string; newName: string; newTag: string }> }>('kustomization.yaml');
    for (const resource of kustomization.resources) expect(existsSync(projectPath('deploy', 'k8s', resource)), resource).toBe(true);
    for (const file of readdirSync(projectPath('deploy', 'k8s'))) expect(file.endsWith('.yaml'), file).toBe(true);
    const [name, tag] = IMAGE.split(':');
    expect(kustomization.images).toEqual([{ name, newName: expect.stringMatching(new RegExp(`/${name}$`)), newTag: tag }]);
  });

  it('runs the image with two replicas, probes on /readyz and /healthz, as non-root on a read-only root', () => {
    const spec = deployment().spec;
    expect(spec.replicas).toBe(2);
    const [container] = spec.template.spec.containers;
    expect(container!.image).toBe(IMAGE);
    expect(container!.ports).toEqual([{ name: 'http', containerPort: loadConfig(projectPath('config'), { env: {} }).main.http.port }]);
    expect(container!.readinessProbe.httpGet).toEqual({ path: '/readyz', port: 'http' });
    expect(container!.livenessProbe.httpGet).toEqual({ path: '/healthz', port: 'http' });
    expect(container!.startupProbe.httpGet).toEqual({ path: '/healthz', port: 'http' });
    expect(spec.template.spec.securityContext).toMatchObject({ runAsNonRoot: true, runAsUser: 1000 });
    expect(container!.securityContext).toMatchObject({ readOnlyRootFilesystem: true, allowPrivilegeEscalation: false });
    const service = manifest<{ spec: { ports: Array<{ targetPort: string }>; selector: Record<string, string> } }>('service.yaml');
    expect(service.spec.ports.map((port) => port.targetPort)).toEqual(['http']);
  });

  it('gives SIGTERM more time than the shutdown grace period', () => {
    const spec = deployment().spec.template.spec;
    const grace = spec.containers[0]!.env.find((e) => e.name === 'PLUMBLINE_SHUTDOWN_GRACE')!.value!;
    expect(grace).toMatch(/^\d+s$/);
    expect(spec.terminationGracePeriodSeconds).toBeGreaterThan(Number(grace.slice(0, -1)));
  });

  it('takes the secrets from the Secret the example describes, and sets only variables plumbline reads', () => {
    const env = deployment().spec.template.spec.containers[0]!.env;
    const secret = manifest<{ kind: string; metadata: { name: string }; stringData: Record<string, string> }>('secret.example.yaml');
    const known = namesInCode();
    for (const variable of env) {
      expect(known.has(variable.name), variable.name).toBe(true);
      const ref = variable.valueFrom?.secretKeyRef;
      if (ref) {
        expect(ref.name).toBe(secret.metadata.name);
        expect(Object.keys(secret.stringData)).toContain(ref.key);
      }
    }
    expect(env.filter((e) => e.valueFrom).map((e) => e.name).sort()).toEqual(['PLUMBLINE_CHAT_WEBHOOK', 'PLUMBLINE_SMTP_URL', 'PLUMBLINE_STATE_URL', 'PLUMBLINE_WAREHOUSE_URL']);
  });

  it('mounts every ConfigMap file where `plumbline serve` reads ./config, and the config in it is valid', () => {
    const spec = deployment().spec.template.spec;
    const map = configMap();
    const volume = spec.volumes.find((v) => v.configMap?.name === map.metadata.name)!;
    expect(volume.configMap!.items.map((item) => item.key).sort()).toEqual(Object.keys(map.data).sort());
    const workdir = dockerfile().filter((i) => i.keyword === 'WORKDIR').at(-1)!.args;
    expect(spec.containers[0]!.volumeMounts).toContainEqual(expect.objectContaining({ name: volume.name, mountPath: `${workdir}/config` }));

    const dir = mkdtempSync(join(tmpdir(), 'plumbline-configmap-'));
    try {
      for (const { key, path } of volume.configMap!.items) {
        mkdirSync(dirname(join(dir, path)), { recursive: true });
        writeFileSync(join(dir, path), map.data[key]!);
      }
      const env = Object.fromEntries(spec.containers[0]!.env.map((e) => [e.name, e.value ?? 'set-from-the-secret']));
      const config = loadConfig(dir, { env });
      expect(config.flows.map((flow) => flow.file)).toEqual([join(dir, 'flows', 'monthly-pass.yaml')]);
      // Every required reference is set by the Deployment.
      for (const { name, required } of references(map.data['plumbline.yaml']!)) if (required) expect(env[name], name).toBeDefined();
      // The outbox folder (when nothing is configured to send) lies on a writable volume.
      const outbox = posix.join(workdir, config.main.delivery.outbox_dir);
      const writable = spec.containers[0]!.volumeMounts.filter((m) => spec.volumes.find((v) => v.name === m.name)?.emptyDir);
      expect(writable.some((mount) => outbox.startsWith(`${mount.mountPath}/`)), outbox).toBe(true);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
