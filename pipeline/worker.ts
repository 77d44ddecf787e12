// Worker-thread entry: reduces one recording per task.
import type { RecordingJob } from './plan.js';
import { reduceRecording } from './reduce.js';

export default (job: RecordingJob) => reduceRecording(job);
