import type { Command } from 'commander';
import { writeFileAtomic } from '../../shared/atomic-write.js';
import { InputError } from '../../shared/errors.js';
import { sweepJsonSchema } from '../../shared/sweep/json-schema.js';
import { action } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';

interface SchemaOptions {
  readonly file?: string;
}

/** `recallscape schema [--file FILE]`: the JSON Schema of the sweep file, for editors. */
export function registerSchema(program: Command): void {
  defineCommand(program, 'schema')
    .option('--file <file>', 'write the schema to this file instead of stdout')
    .action(
      action(async (options: SchemaOptions) => {
        const text = `${JSON.stringify(sweepJsonSchema(), null, 2)}\n`;
        if (options.file === undefined) {
          process.stdout.write(text);
          return;
        }
        // Temporary file + rename: a reader never sees half a schema, and a failure leaves nothing behind.
        try {
          await writeFileAtomic(options.file, text, { createFolder: false });
        } catch (error) {
          const code = (error as NodeJS.ErrnoException).code;
          throw new InputError(`--file ${options.file}: cannot write the schema there (${code ?? String(error)})`, [
            { path: '--file', message: `cannot write ${options.file}` },
          ]);
        }
        process.stdout.write(`wrote ${options.file}\n`);
      }),
    );
}
