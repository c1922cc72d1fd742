import type { ChannelInfo } from '../readers/types.js';
import type { RecordingSummary } from '../stats/summarise.js';
import { channelStats, type ChannelStats } from '../stats/channel-stats.js';
import { getCheck } from '../checks/registry.js';
import type { ChannelContext, ChannelSegments, Finding, FindingStatus, Severity } from '../checks/types.js';
import type { SegmentSummary } from '../stats/segment-analyses.js';
import { correlationShape } from '../stats/autocorrelation.js';
import { correlatedPairs } from '../stats/cross-correlation.js';
import { broadbandRms, lineLevels } from '../stats/mains-lines.js';
import { checksForChannel } from '../rules/select.js';
import type { ResolvedRules } from '../rules/types.js';
import type { ChannelContent, ChannelVerdict, RecordingVerdict, Verdict } from './types.js';
import { distinctLevelCount, smallestLevelStep } from '../stats/distinct-levels.js';

/** What the gate needs of one recording that was read. */
export interface ReadRecording {
  path: string;
  sha256: string | null;
  format: string;
  sampleRate: number;
  channels: ChannelInfo[];
  notes: string[];
  summary: RecordingSummary;
}

/** Worst first: the verdict of a set is its worst member's. */
const rank: Record<Verdict, number> = { pass: 0, warn: 1, skip: 2, fail: 3, error: 4 };

export function worst(verdicts: Iterable<Verdict>, empty: Verdict = 'skip'): Verdict {
  let out: Verdict | undefined;
  for (const v of verdicts) if (out === undefined || rank[v] > rank[out]) out = v;
  return out ?? empty;
}

function statusFor(ok: boolean | null, severity: Severity): FindingStatus {
  if (ok === null) return 'skip';
  if (ok) return 'pass';
  return severity === 'error' ? 'fail' : 'warn';
}

/**
 * A channel's verdict: fail or warn when any finding does; pass when at least one check
 * passed; skip when every check was skipped (or none applies): not screened, never "passed".
 */
export function channelVerdict(findings: Finding[]): Verdict {
  if (findings.some((f) => f.status === 'fail')) return 'fail';
  if (findings.some((f) => f.status === 'warn')) return 'warn';
  if (findings.some((f) => f.status === 'pass')) return 'pass';
  return 'skip';
}

/** The channels a channel is compared with: its sidecar group, else those with its unit. */
function peersOf(channels: ChannelInfo[], stats: ChannelStats[], i: number) {
  const me = channels[i];
  const same = (c: ChannelInfo) => (me.group !== undefined ? c.group === me.group : c.group === undefined && c.unit === me.unit);
  return channels.map((c, j) => ({ channel: c, stats: stats[j] })).filter((p) => same(p.channel));
}

/** Judges one recording's statistics against resolved rules. Pure. */
export function judgeRecording(input: ReadRecording, rules: ResolvedRules): RecordingVerdict {
  const fs = input.sampleRate;
  const durationS = input.summary.samples / fs;
  const stats = input.summary.channels.map((s) => channelStats(s, { sampleRate: fs }));
  const everyChannel = input.channels.map((channel, j) => ({ channel, stats: stats[j] }));
  const segmentViews = input.summary.segments ? channelSegments(input.summary.segments, input.channels) : null;
  const channels: ChannelVerdict[] = input.channels.map((channel, i) => {
    const context: ChannelContext = {
      recording: { path: input.path, sampleRate: fs, durationS },
      channel,
      stats: stats[i],
      summary: input.summary.channels[i],
      peers: peersOf(input.channels, stats, i),
      channels: everyChannel,
    };
    if (segmentViews) context.segments = segmentViews[i];
    const findings: Finding[] = [];
    for (const [id, setting] of Object.entries(checksForChannel(rules, channel))) {
      const check = getCheck(id);
      if (!check) continue; // the loader refuses unknown ids; nothing to run here
      const outcome = check.evaluate(context, setting.options);
      findings.push({
        check: id,
        status: statusFor(outcome.ok, setting.severity),
        severity: setting.severity,
        value: outcome.value !== null && Number.isFinite(outcome.value) ? outcome.value : null,
        unit: outcome.unit ?? '',
        limit: outcome.limit,
        message: outcome.message,
        at: outcome.at ?? null,
      });
    }
    return {
      index: channel.index,
      name: channel.name,
      unit: channel.unit ?? null,
      sensor: channel.sensor ?? null,
      group: channel.group ?? null,
      verdict: channelVerdict(findings),
      stats: stats[i],
      findings,
      ...(segmentViews ? { content: channelContent(segmentViews[i], input.summary.geometry.frameSamples) } : {}),
    };
  });
  const findings = expectationFindings(input, rules, durationS);
  const judged = channels.filter((c) => c.verdict !== 'skip');
  let verdict = worst([...channels.map((c) => c.verdict).filter((v) => v !== 'skip'), ...findings.map(findingVerdict)], 'skip');
  // a recording none of whose channels was judged was not screened, whatever else passed;
  // nor was one with a channel whose checks ran but could none of them judge it (the gate is
  // never 0 when something could not be checked). A channel the rule file switched every
  // check off for was left out on purpose and does not count.
  const unjudged = channels.some((c) => c.findings.length > 0 && c.findings.every((f) => f.status === 'skip'));
  if (judged.length === 0 || unjudged) verdict = worst([verdict, 'skip']);
  return {
    path: input.path,
    sha256: input.sha256,
    verdict,
    error: null,
    format: input.format,
    sampleRate: fs,
    durationS,
    samples: input.summary.samples,
    findings,
    channels,
    notes: input.notes,
  };
}

/** Each channel's view of the segment analyses, derived once for all its checks. */
export function channelSegments(s: SegmentSummary, channels: ChannelInfo[]): ChannelSegments[] {
  const correlated: Array<ChannelSegments['correlated']> = channels.map(() => (s.cross ? [] : null));
  if (s.cross) {
    for (const p of correlatedPairs(s.cross, 0.9)) {
      correlated[p.a]!.push({ channel: channels[p.b], r: p.r, identical: p.identical });
      correlated[p.b]!.push({ channel: channels[p.a], r: p.r, identical: p.identical });
    }
  }
  return channels.map((_, c) => ({
    segmentSamples: s.plan.segmentSamples,
    used: s.used,
    correlation: s.autocorrelation ? correlationShape(s.autocorrelation[c]) : null,
    lines: s.lines.map((l) => ({ fundamentalHz: l.fundamentalHz, levels: lineLevels(l.channels[c]), broadbandRms: broadbandRms(l.channels[c]) })),
    levels: s.levels ? s.levels[c] : null,
    correlated: correlated[c],
  }));
}

const finiteOrNull = (v: number) => (Number.isFinite(v) ? v : null);

/** The JSON record's view of a channel's segment analyses. */
function channelContent(s: ChannelSegments, frameSamples: number): ChannelContent {
  const c = s.correlation;
  const levels = s.levels ? distinctLevelCount(s.levels) : null;
  return {
    segmentSamples: s.segmentSamples,
    segmentsUsed: s.used,
    correlation: c && Number.isFinite(c.sumRho4)
      ? { sumRho3: c.sumRho3, sumRho4: c.sumRho4, correlationSamples: c.correlationSamples, settled: c.settled, effectiveSamplesPerFrame: finiteOrNull(frameSamples / c.sumRho4) }
      : null,
    mains: s.lines.map((l) => ({
      fundamentalHz: l.fundamentalHz,
      broadbandRms: l.broadbandRms,
      lines: l.levels.filter((v) => Number.isFinite(v.rms)).map((v) => ({ hz: v.hz, rms: v.rms, prominenceDb: v.prominenceDb })),
    })),
    levels: s.levels && levels ? { count: levels.count, exact: levels.exact, smallestStep: finiteOrNull(smallestLevelStep(s.levels)) } : null,
    correlatedWith: s.correlated ? s.correlated.map((p) => ({ name: p.channel.name, r: p.r, identical: p.identical })) : null,
  };
}

function findingVerdict(f: Finding): Verdict {
  return f.status === 'fail' ? 'fail' : f.status === 'warn' ? 'warn' : f.status === 'pass' ? 'pass' : 'skip';
}

/** A recording that could not be read (or only in part): it fails the gate, never skipped. */
export function unreadableRecording(path: string, error: string, sha256: string | null = null): RecordingVerdict {
  return {
    path, sha256, verdict: 'error', error, format: null, sampleRate: null, durationS: null, samples: null,
    findings: [], channels: [], notes: [],
  };
}

/** Findings on the recording as a whole: duration, sample rate, channel count and names. */
function expectationFindings(input: ReadRecording, rules: ResolvedRules, durationS: number): Finding[] {
  const e = rules.expect;
  const out: Finding[] = [];
  const add = (check: string, ok: boolean, value: number | null, unit: string, limit: string, message: string) =>
    out.push({ check, status: statusFor(ok, e.severity), severity: e.severity, value, unit, limit, message, at: null });
  if (e.minDurationS !== undefined) {
    const ok = durationS >= e.minDurationS;
    add('min-duration', ok, durationS, 's', `≥ ${e.minDurationS} s`,
      ok ? `the record lasts ${fmt(durationS)} s; limit ≥ ${e.minDurationS} s`
        : `the record lasts ${fmt(durationS)} s, shorter than the ${e.minDurationS} s the rule file expects: the acquisition stopped early, or the wrong file?`);
  }
  if (e.sampleRate) {
    const [lo, hi] = e.sampleRate;
    const ok = input.sampleRate >= lo && input.sampleRate <= hi;
    const limit = lo === hi ? `${lo} Hz` : `${lo} … ${hi} Hz`;
    add('sample-rate', ok, input.sampleRate, 'Hz', limit,
      ok ? `sampled at ${fmt(input.sampleRate)} Hz; expected ${limit}`
        : `sampled at ${fmt(input.sampleRate)} Hz, but the rule file expects ${limit}: wrong acquisition settings, or the wrong rule file?`);
  }
  if (e.channelCount !== undefined) {
    const n = input.channels.length;
    const ok = n === e.channelCount;
    add('channel-count', ok, n, '', `${e.channelCount}`,
      ok ? `${n} channels, as expected` : `${n} channels, but the rule file expects ${e.channelCount}: a channel missing from the acquisition, or the wrong channel table?`);
  }
  if (e.channelNames) {
    const have = new Set(input.channels.map((c) => c.name));
    const missing = e.channelNames.filter((n) => !have.has(n));
    add('channel-names', missing.length === 0, missing.length, '', `all of ${e.channelNames.length} named channels`,
      missing.length === 0 ? 'every expected channel is present'
        : `missing channel${missing.length === 1 ? '' : 's'} ${missing.map((m) => `"${m}"`).join(', ')}: not recorded, renamed, or no sidecar naming them?`);
  }
  return out;
}

const fmt = (v: number) => Number(v.toPrecision(6)).toString();
