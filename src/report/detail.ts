/**
 * What a person-facing report needs beyond the verdicts: per-frame trends of every channel
 * and, for channels that warn or fail, a short waveform excerpt around the worst finding.
 * Not part of the JSON record (it would bloat the audit trail); built by the CLI from the
 * same summaries the gate judged, plus a read of the excerpt's few samples.
 */
export interface ChannelDetail {
  /** Per usable frame: start time (s), RMS and mean (channel unit), kurtosis, skewness. */
  frames: { timeS: number[]; rms: number[]; mean: number[]; kurtosis: number[]; skewness: number[] };
  /** Samples around the worst finding, for channels that warn or fail; null otherwise. */
  excerpt: { startS: number; sampleRate: number; values: number[]; check: string } | null;
}

/** Details by recording path (as given), then by channel position in the recording. */
export type ReportDetail = Map<string, ChannelDetail[]>;
