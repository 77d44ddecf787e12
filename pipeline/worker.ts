// Worker-thread entry: reduces one recording per task.
import type { RecordingJob } from './plan.js';
import { computeRecording } from './reduce.js';

export default (job: RecordingJob) => computeRecording(job);
