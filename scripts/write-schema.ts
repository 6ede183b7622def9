/** Regenerates schema/study.schema.json from the zod schema (run by `npm run schema`). */
import { writeFile } from 'node:fs/promises';
import { studyJsonSchema } from '../src/study/json-schema.js';

const target = new URL('../../schema/study.schema.json', import.meta.url);
await writeFile(target, `${JSON.stringify(studyJsonSchema(), null, 2)}\n`);
console.log(`wrote ${target.pathname}`);
