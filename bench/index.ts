/**
 * `npm run bench [section ...]`: prints the figures the issues ask for.
 * Sections live in their own files and export `run()`.
 */
import { cpus, totalmem } from 'node:os';

type Section = { readonly name: string; readonly load: () => Promise<{ run: () => Promise<void> }> };

const SECTIONS: readonly Section[] = [
  { name: 'simulation', load: () => import('./simulation.js') },
  { name: 'embedded', load: () => import('./embedded.js') },
  { name: 'queue', load: () => import('./queue.js') },
  { name: 'summarize', load: () => import('./summarize.js') },
  { name: 'validation', load: () => import('./validation.js') },
  { name: 'external', load: () => import('./external.js') },
  { name: 'startup', load: () => import('./startup.js') },
  { name: 'adaptive', load: () => import('./adaptive.js') },
  { name: 'integrity', load: () => import('./integrity.js') },
  { name: 'builds', load: () => import('./builds.js') },
];

const wanted = process.argv.slice(2);
const cpu = cpus()[0]?.model ?? 'unknown cpu';
console.log(`machine: ${cpus().length} x ${cpu}, ${(totalmem() / 2 ** 30).toFixed(1)} GiB, node ${process.version}`);
for (const section of SECTIONS) {
  if (wanted.length > 0 && !wanted.includes(section.name)) continue;
  console.log(`\n== ${section.name} ==`);
  const mod = await section.load();
  await mod.run();
}
