import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { ROOT, runCli } from './helpers.js';

interface Service {
  image?: string;
  build?: string | { context?: string };
  pull_policy?: string;
  init?: boolean;
  entrypoint?: string[];
  command?: string[];
  environment?: Record<string, string>;
  volumes?: string[];
  ports?: unknown;
  container_name?: string;
  profiles?: string[];
  restart?: string;
}

async function compose(): Promise<{ services: Record<string, Service>; volumes: Record<string, unknown> }> {
  const text = await readFile(join(ROOT, 'docker-compose.yml'), 'utf8');
  // `<<:` merge keys are YAML 1.1; the yaml library resolves them with merge: true.
  return parse(text, { merge: true }) as { services: Record<string, Service>; volumes: Record<string, unknown> };
}

describe('docker-compose.yml', () => {
  it('runs Redis with a password and append-only persistence on a volume, publishing no port', async () => {
    const { services } = await compose();
    const redis = services['redis'];
    const script = [...(redis?.entrypoint ?? []), ...(redis?.command ?? [])].join(' ');
    // redis.conf directives "requirepass" and "appendonly yes": Redis configuration documentation, from memory.
    expect(script).toMatch(/requirepass/);
    expect(script).toMatch(/appendonly yes/);
    expect(redis?.volumes?.some((v) => v.endsWith(':/data'))).toBe(true);
    expect(redis?.ports).toBeUndefined();
  });

  it('has a one-shot submit and a worker that scales, sharing a results volume', async () => {
    const { services, volumes } = await compose();
    const submit = services['submit'];
    const worker = services['worker'];
    expect(submit?.command?.[0]).toBe('submit');
    expect(submit?.restart).toBe('no');
    // In a profile: `docker compose up` does not start it; `docker compose run --rm submit` does.
    expect(submit?.profiles?.length).toBeGreaterThan(0);
    expect(worker?.command?.[0]).toBe('worker');
    // `--scale worker=N` needs no fixed container name and no fixed host port.
    expect(worker?.container_name).toBeUndefined();
    expect(worker?.ports).toBeUndefined();
    expect(worker?.profiles).toBeUndefined();
    const mount = (s: Service | undefined) => s?.volumes?.find((v) => v.endsWith(':/results'));
    expect(mount(submit)).toBe('results:/results');
    expect(mount(worker)).toBe('results:/results');
    expect(Object.keys(volumes)).toContain('results');
    expect(submit?.command).toContain('/results');
    expect(worker?.command).toContain('/results');
  });

  it('runs recallscape from the image the Dockerfile builds, never from a pulled one', async () => {
    const { services } = await compose();
    const ours = Object.entries(services).filter(([, s]) => s.build !== undefined);
    expect(ours.map(([name]) => name).sort()).toEqual(['progress', 'submit', 'worker']);
    for (const [name, service] of ours) {
      const context = typeof service.build === 'string' ? service.build : service.build?.context;
      expect(context, name).toBe('.');
      // Compose pulls an image that has a name before it builds unless told to build: a registry
      // image of the same name would run instead (Compose file reference, pull_policy; from memory).
      expect(service.pull_policy, name).toBe('build');
      // The Dockerfile's ENTRYPOINT is the command; an override would bypass the installed package.
      expect(service.entrypoint, name).toBeUndefined();
      expect(service.init, name).toBe(true);
    }
    // Only the submit service reads sweep files from the host, read-only, at the image's working folder.
    const dockerfile = await readFile(join(ROOT, 'Dockerfile'), 'utf8');
    const workdir = [...dockerfile.matchAll(/^WORKDIR\s+(\S+)/gm)].at(-1)?.[1];
    expect(services['submit']?.volumes).toContain(`./:${workdir}:ro`);
    expect(services['worker']?.volumes?.some((v) => v.startsWith('./'))).toBe(false);
  });

  it('uses only commands, options and environment variables that the CLI has', async () => {
    const { services } = await compose();
    const ours = Object.entries(services).filter(([, s]) => s.build !== undefined);
    expect(ours.length).toBe(3);
    const helps = await Promise.all(ours.map(([, s]) => runCli([s.command?.[0] ?? '', '--help'])));
    ours.forEach(([name, service], i) => {
      const help = helps[i];
      expect(help?.code, `${name}: ${help?.stderr ?? ''}`).toBe(0);
      const text = help?.stdout ?? '';
      for (const arg of service.command ?? []) {
        if (arg.startsWith('--')) expect(text, `${name} ${arg}`).toMatch(new RegExp(`(^|\\s)${arg}[\\s,]`));
      }
      for (const variable of Object.keys(service.environment ?? {})) {
        if (variable.startsWith('RECALLSCAPE_'))
          expect(text.replace(/\s+/g, ' '), `${name} ${variable}`).toContain(variable);
      }
    });
  });
});
