import type { Finding } from '../checks/types.js';
import type { ChannelVerdict, GateResult, RecordingVerdict } from '../gate/types.js';
import type { ChannelStats, FrameExtremes } from '../stats/channel-stats.js';

/**
 * The JSON audit record of a gate run (design.md; schema: schemas/record.schema.json,
 * `$id` https://vibgate.dev/schemas/record-1.json). It proves which recordings (by SHA-256)
 * were screened with which rule files (by SHA-256), and what every check found.
 *
 * Written field by field, not by spreading the gate's objects, so the key order is the
 * contract's whatever order the producer built its objects in, and a field added to the
 * gate's types does not leak into the record without a schema change. Numbers that JSON
 * cannot hold (NaN, ±Infinity: e.g. the kurtosis of a constant channel) are written as null.
 * Two-space indent, trailing newline.
 */
export function jsonRecord(result: GateResult): string {
  const record = {
    tool: { name: result.tool.name, version: result.tool.version },
    createdAt: result.createdAt,
    rules: {
      path: result.rules.path,
      sha256: result.rules.sha256,
      name: result.rules.name,
      files: result.rules.files.map((f) => ({ path: f.path, sha256: f.sha256 })),
    },
    verdict: result.verdict,
    recordings: result.recordings.map(recordingRecord),
  };
  return JSON.stringify(record, null, 2) + '\n';
}

function recordingRecord(r: RecordingVerdict) {
  return {
    path: r.path,
    sha256: r.sha256,
    verdict: r.verdict,
    error: r.error,
    format: r.format,
    sampleRate: num(r.sampleRate),
    // design.md names it `duration`; in seconds, like every time in the record
    duration: num(r.durationS),
    samples: num(r.samples),
    notes: [...r.notes],
    findings: r.findings.map(findingRecord),
    // file order, whatever order the gate listed them in
    channels: [...r.channels].sort((a, b) => a.index - b.index).map(channelRecord),
  };
}

function channelRecord(c: ChannelVerdict) {
  return {
    index: c.index,
    name: c.name,
    unit: c.unit,
    sensor: c.sensor,
    group: c.group,
    verdict: c.verdict,
    stats: statsRecord(c.stats),
    findings: c.findings.map(findingRecord),
  };
}

function findingRecord(f: Finding) {
  return {
    check: f.check,
    status: f.status,
    severity: f.severity,
    value: num(f.value),
    unit: f.unit,
    limit: f.limit,
    message: f.message,
    at: f.at === null ? null : { startS: num(f.at.startS), endS: num(f.at.endS) },
  };
}

/** ChannelStats with every number JSON-safe. The type makes a stats field missing here a compile error. */
type JsonStats<T> = T extends number
  ? number | null
  : T extends string | boolean | null
    ? T
    : { [K in keyof T]: JsonStats<T[K]> };

function statsRecord(s: ChannelStats): JsonStats<ChannelStats> {
  return {
    samples: s.samples,
    finiteSamples: s.finiteSamples,
    nonFinite: s.nonFinite,
    firstNonFiniteTimeS: num(s.firstNonFiniteTimeS),
    mean: num(s.mean),
    std: num(s.std),
    stdSample: num(s.stdSample),
    rms: num(s.rms),
    min: num(s.min),
    minTimeS: num(s.minTimeS),
    max: num(s.max),
    maxTimeS: num(s.maxTimeS),
    peak: num(s.peak),
    crestFactor: num(s.crestFactor),
    skewness: num(s.skewness),
    kurtosis: num(s.kurtosis),
    skewnessG1: num(s.skewnessG1),
    excessKurtosisG2: num(s.excessKurtosisG2),
    symmetryRatio: num(s.symmetryRatio),
    largerSide: s.largerSide,
    longestRun: {
      samples: s.longestRun.samples,
      seconds: num(s.longestRun.seconds),
      startTimeS: num(s.longestRun.startTimeS),
      value: num(s.longestRun.value),
    },
    longestZeroRun: {
      samples: s.longestZeroRun.samples,
      seconds: num(s.longestZeroRun.seconds),
      startTimeS: num(s.longestZeroRun.startTimeS),
    },
    extremes: {
      atMin: s.extremes.atMin,
      atMax: s.extremes.atMax,
      flatAtMin: s.extremes.flatAtMin,
      flatAtMax: s.extremes.flatAtMax,
      flatFraction: num(s.extremes.flatFraction),
      flatFactorDb: num(s.extremes.flatFactorDb),
    },
    fullScale:
      s.fullScale === null
        ? null
        : {
            low: num(s.fullScale.low),
            high: num(s.fullScale.high),
            atLow: s.fullScale.atLow,
            atHigh: s.fullScale.atHigh,
            fraction: num(s.fullScale.fraction),
          },
    frames:
      s.frames === null
        ? null
        : {
            frameS: num(s.frames.frameS),
            hopS: num(s.frames.hopS),
            used: s.frames.used,
            leftOut: s.frames.leftOut,
            mean: extremesRecord(s.frames.mean),
            rms: extremesRecord(s.frames.rms),
            min: extremesRecord(s.frames.min),
            max: extremesRecord(s.frames.max),
            skewness: extremesRecord(s.frames.skewness),
            kurtosis: extremesRecord(s.frames.kurtosis),
            crestFactor: extremesRecord(s.frames.crestFactor),
          },
  };
}

function extremesRecord(e: FrameExtremes): JsonStats<FrameExtremes> {
  return { min: num(e.min), minTimeS: num(e.minTimeS), max: num(e.max), maxTimeS: num(e.maxTimeS) };
}

/** JSON has no NaN or infinities; null says "no finite value". */
function num(value: number | null): number | null {
  return value !== null && Number.isFinite(value) ? value : null;
}
