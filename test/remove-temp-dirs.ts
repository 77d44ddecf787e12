// Run before each test file (vitest's setupFiles): the temporary folders its tests made are removed once they are done,
// so that test runs do not fill the temporary folder (each full run made some hundred folders, about 175 MB).
import { afterAll } from 'vitest';
import { removeTempDirs } from './helpers.js';

afterAll(removeTempDirs);
