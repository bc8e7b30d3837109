import { existsSync } from 'node:fs';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { runCli } from '../cli/cli-helpers.js';
import { ROOT } from '../queue/helpers.js';

/**
 * No Docker engine runs here, so the Dockerfile is read as text and checked
 * against what it must agree with: package.json, the CLI and the compose file.
 */

interface Instruction {
  readonly keyword: string;
  readonly args: string;
}

interface Stage {
  readonly base: string;
  readonly name: string | undefined;
  readonly instructions: Instruction[];
}

/** Instructions of a Dockerfile, continuation lines joined and comments dropped (Dockerfile reference, from memory). */
function instructions(text: string): Instruction[] {
  const out: Instruction[] = [];
  let pending = '';
  for (const raw of text.split('\n')) {
    const line = raw.trim();
    if (line.startsWith('#') || (line === '' && pending === '')) continue;
    pending += `${line.endsWith('\\') ? line.slice(0, -1) : line} `;
    if (line.endsWith('\\')) continue;
    const match = /^(\S+)\s+(.*)$/.exec(pending.trim());
    if (match?.[1] !== undefined) out.push({ keyword: match[1].toUpperCase(), args: (match[2] ?? '').trim() });
    pending = '';
  }
  return out;
}

function stages(list: readonly Instruction[]): Stage[] {
  const out: Stage[] = [];
  for (const instruction of list) {
    if (instruction.keyword === 'FROM') {
      const [base = '', as, name] = instruction.args.split(/\s+/);
      out.push({ base, name: as?.toUpperCase() === 'AS' ? name : undefined, instructions: [] });
    } else {
      out.at(-1)?.instructions.push(instruction);
    }
  }
  return out;
}

async function load(): Promise<{ stages: Stage[]; pkg: PackageJson }> {
  const text = await readFile(join(ROOT, 'Dockerfile'), 'utf8');
  const pkg = JSON.parse(await readFile(join(ROOT, 'package.json'), 'utf8')) as PackageJson;
  return { stages: stages(instructions(text)), pkg };
}

interface PackageJson {
  readonly name: string;
  readonly engines: { node: string };
  readonly bin: Record<string, string>;
  readonly files: string[];
}

const runs = (stage: Stage | undefined) =>
  (stage?.instructions ?? []).filter((i) => i.keyword === 'RUN').map((i) => i.args);
const last = (stage: Stage | undefined, keyword: string) =>
  (stage?.instructions ?? []).filter((i) => i.keyword === keyword).at(-1)?.args;

describe('Dockerfile', () => {
  it('builds in stages from a slim Node image of the major version package.json asks for', async () => {
    const { stages: all, pkg } = await load();
    expect(all.length).toBeGreaterThanOrEqual(2);
    const wanted = /^>=\s*(\d+)/.exec(pkg.engines.node)?.[1];
    expect(wanted).toBeDefined();
    for (const stage of all) expect(stage.base).toMatch(new RegExp(`^node:${wanted}(\\.\\d+)*-[a-z]+-slim$`));
    // One base for every stage: native add-ons built against one Node and libc run on the same.
    expect(new Set(all.map((s) => s.base)).size).toBe(1);
  });

  it('packs the command with npm pack, so the image holds exactly what package.json lists', async () => {
    const { stages: all, pkg } = await load();
    const build = all.find((s) => runs(s).some((r) => /\bnpm pack\b/.test(r)));
    expect(build, 'a stage that runs npm pack').toBeDefined();
    const copied = (build?.instructions ?? [])
      .filter((i) => i.keyword === 'COPY' && !i.args.startsWith('--from'))
      .flatMap((i) => i.args.split(/\s+/).slice(0, -1));
    // Every source the build stage copies exists in the repository.
    for (const source of copied) expect(existsSync(join(ROOT, source)), source).toBe(true);
    // Everything the package ships comes from a copied folder: dist/X is compiled from X.
    const needed = pkg.files
      .filter((f) => !f.startsWith('!'))
      .map((f) => f.replace(/\/$/, '').replace(/^dist\//, ''))
      .filter((f) => existsSync(join(ROOT, f)));
    for (const folder of needed) expect(copied, folder).toContain(folder);
    for (const file of ['package.json', 'package-lock.json', 'tsconfig.json']) expect(copied).toContain(file);
  });

  it('installs production dependencies only, from the lock file, into the final image', async () => {
    const { stages: all } = await load();
    const final = all.at(-1);
    const fromStages = (final?.instructions ?? [])
      .filter((i) => i.keyword === 'COPY' && i.args.startsWith('--from='))
      .map((i) => ({ stage: /^--from=(\S+)/.exec(i.args)?.[1], args: i.args }));
    const modules = fromStages.find((c) => /node_modules/.test(c.args));
    expect(modules, 'node_modules copied from a stage').toBeDefined();
    const depsStage = all.find((s) => s.name === modules?.stage);
    const install = runs(depsStage).find((r) => /\bnpm ci\b/.test(r));
    expect(install).toMatch(/--omit=dev/);
    expect(runs(final).some((r) => /\bnpm (ci|install)\b/.test(r))).toBe(false);
  });

  it('runs as an unprivileged user with the recallscape command as its entrypoint', async () => {
    const { stages: all, pkg } = await load();
    const final = all.at(-1);
    const user = last(final, 'USER');
    expect(user).toBeDefined();
    expect(['root', '0']).not.toContain(user?.split(':')[0]);
    const entrypoint = JSON.parse(last(final, 'ENTRYPOINT') ?? 'null') as unknown;
    expect(entrypoint).toEqual([Object.keys(pkg.bin)[0]]);
    expect(Object.keys(pkg.bin)).toEqual(['recallscape']);
    // The name on the PATH leads to package.json's bin file, as `npm install -g` links it.
    const link = runs(final).join(' ');
    expect(link).toMatch(
      new RegExp(`ln -s \\S+/${pkg.bin['recallscape']?.replace('.', '\\.')} /usr/local/bin/recallscape`),
    );
    expect(existsSync(join(ROOT, pkg.bin['recallscape'] ?? ''))).toBe(true);
  });

  it('gives the user the folders the compose file mounts', async () => {
    const { stages: all } = await load();
    const final = all.at(-1);
    const compose = parse(await readFile(join(ROOT, 'docker-compose.yml'), 'utf8'), { merge: true }) as {
      services: Record<string, { build?: unknown; volumes?: string[] }>;
    };
    const targets = new Set(
      Object.values(compose.services)
        .filter((s) => s.build !== undefined)
        .flatMap((s) => s.volumes ?? [])
        .map((v) => v.split(':')[1] ?? ''),
    );
    expect(targets.size).toBeGreaterThan(0);
    const chown = runs(final).join(' ');
    const user = last(final, 'USER');
    // A fresh named volume takes the owner of the image's folder it is mounted on (Docker volumes, from memory).
    for (const target of targets) expect(chown, target).toMatch(new RegExp(`chown ${user}:${user} [^&]*${target}\\b`));
  });

  it('has a default command the CLI accepts', async () => {
    const { stages: all } = await load();
    const cmd = JSON.parse(last(all.at(-1), 'CMD') ?? '[]') as string[];
    const result = await runCli(cmd, ROOT);
    expect(result.code, result.stderr).toBe(0);
    expect(result.stdout).toMatch(/^Usage: recallscape/m);
  });

  it('keeps local builds, results and the git folder out of the build context', async () => {
    const ignored = (await readFile(join(ROOT, '.dockerignore'), 'utf8')).split('\n').map((l) => l.trim());
    for (const entry of ['node_modules', 'dist', 'results', '.git']) expect(ignored).toContain(entry);
  });
});
