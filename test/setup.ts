import { afterAll } from 'vitest';
import { removeFolders } from './helpers.js';

afterAll(removeFolders);
