import { readFile, writeFile } from 'node:fs/promises';
import { withGeneratedSections } from './readme-sections.js';

// `npm run docs`: rewrites README.md's generated sections (config reference, headers, metrics).
const path = new URL('../../README.md', import.meta.url);
const before = await readFile(path, 'utf8');
const after = withGeneratedSections(before);
await writeFile(path, after);
console.log(before === after ? 'README.md: generated sections already current' : 'README.md: generated sections rewritten');
