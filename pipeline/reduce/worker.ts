// Worker-thread entry: batches of recordings to reduce, slices of the tables to assemble, pictures to fetch.
export { reduceBatch } from './batch.js';
export { assembleSlice, picturesOf } from '../outputs/slice.js';
