import { readFileSync } from 'node:fs';
import { projectPath } from './paths.js';

/** heatledger's version, from package.json; stored with every run. */
export const VERSION: string = JSON.parse(readFileSync(projectPath('package.json'), 'utf8')).version;
