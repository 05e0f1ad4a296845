/** `rigsolve schema [session|rig]`: prints the JSON Schema of a file format. */
import { Argument, type Command } from 'commander';
import { rigFileJsonSchema, sessionJsonSchema } from '../io/schema.js';
import type { CliContext } from './context.js';

export function registerSchema(program: Command, ctx: CliContext): void {
  program
    .command('schema')
    .description('print the JSON Schema of the session file (or of the rig file)')
    .addArgument(new Argument('[kind]', 'which file format').choices(['session', 'rig']).default('session'))
    .action((kind: string) => {
      const schema = kind === 'rig' ? rigFileJsonSchema() : sessionJsonSchema();
      ctx.out(JSON.stringify(schema, null, 2));
    });
}
