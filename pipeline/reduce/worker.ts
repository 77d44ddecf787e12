// Worker-thread entry: reduces one recording per task.
import type { RecordingJob } from '../plan/plan.js';
import { computeRecording } from './compute.js';

export default (job: RecordingJob) => computeRecording(job);
