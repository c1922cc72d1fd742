import junitModule, { type Builder, type TestCase, type TestSuite } from 'junit-report-builder';
import type { Finding } from '../checks/types.js';
import type { ChannelVerdict, GateResult, RecordingVerdict } from '../gate/types.js';
import { numberText, spanText } from './terminal.js';

// The package is CommonJS (`module.exports = builder`) typed as `export default builder`:
// Node hands a default import the builder itself, TypeScript and bundlers may see
// `{ default: builder }`. Either way this is the package's shared builder.
const sharedBuilder: Builder =
  (junitModule as unknown as { default?: Builder }).default ?? (junitModule as unknown as Builder);

/**
 * JUnit XML of a gate run, the contract in design.md that build servers read:
 *
 * - one `<testsuite>` per recording, named by its path as given, with properties
 *   `rules.path`, `rules.sha256`, `recording.sha256`, `sample-rate` (Hz), `duration-s`,
 *   `tool.version` (a property whose value is unknown, e.g. the sample rate of a file that
 *   could not be read, is left out rather than written empty);
 * - one `<testcase>` per channel × check, `classname` = recording path, `name` =
 *   `<channel> / <check>`, and `(recording) / <check>` for the recording's own findings;
 * - fail → `<failure message="…">` whose body repeats the message with value, limit, time
 *   span and severity, because some CI front ends show only the body;
 * - warn → a passing testcase whose `<system-out>` holds the same text: JUnit has no
 *   "passed with a warning", a warning must not fail the build, and GitLab shows a
 *   testcase's system-out;
 * - skip → `<skipped/>`; the builder gives it no message, so the reason goes to system-out;
 * - an unreadable recording → one testcase `(recording) / read` with `<error>`.
 *
 * No wall-clock time is written: testcases carry no `time`, and the only timestamp is the
 * suite's, taken from `result.createdAt`, so the same result gives the same bytes.
 */
export function junitReport(result: GateResult): string {
  // the default export is one shared builder; a fresh one per call keeps reports apart
  const builder = sharedBuilder.newBuilder().name(result.tool.name);
  const timestamp = junitTimestamp(result.createdAt);
  for (const recording of result.recordings) {
    const suite = builder.testSuite().name(recording.path);
    if (timestamp !== null) suite.timestamp(timestamp);
    suiteProperties(suite, result, recording);
    recordingCases(suite, recording);
  }
  return builder.build() + '\n';
}

function suiteProperties(suite: TestSuite, result: GateResult, r: RecordingVerdict): void {
  const properties: Array<[string, string | null]> = [
    ['rules.path', result.rules.path],
    ['rules.sha256', result.rules.sha256],
    ['recording.sha256', r.sha256],
    // machine-read, so full precision: String() round-trips a double
    ['sample-rate', r.sampleRate === null ? null : String(r.sampleRate)],
    ['duration-s', r.durationS === null ? null : String(r.durationS)],
    ['tool.version', result.tool.version],
  ];
  for (const [name, value] of properties) if (value !== null) suite.property(name, value);
}

function recordingCases(suite: TestSuite, r: RecordingVerdict): void {
  const names = uniqueNames();
  if (r.error !== null || r.verdict === 'error') {
    const error = r.error ?? `The recording "${r.path}" could not be read`;
    const body = [error, '', `recording: ${r.path}`, ...(r.sha256 !== null ? [`sha256:    ${r.sha256}`] : [])].join('\n');
    suite.testCase().className(r.path).name(names('(recording) / read')).error(error, 'unreadable', cdataSafe(body));
  }
  for (const f of r.findings) findingCase(suite, r.path, names(`(recording) / ${f.check}`), f, null);
  const labels = channelLabels(r.channels);
  r.channels.forEach((channel, i) => {
    for (const f of channel.findings) findingCase(suite, r.path, names(`${labels[i]} / ${f.check}`), f, channel);
  });
}

function findingCase(suite: TestSuite, path: string, name: string, f: Finding, channel: ChannelVerdict | null): TestCase {
  const test = suite.testCase().className(path).name(name);
  const body = cdataSafe(details(f, channel));
  switch (f.status) {
    case 'fail':
      return test.failure(f.message, f.check).stacktrace(body);
    case 'warn':
      return test.standardOutput(`warning: ${body}`);
    case 'skip':
      return test.skipped().standardOutput(`not judged: ${body}`);
    case 'pass':
      return test;
  }
}

/** The message again, then the facts a CI page may not show elsewhere, one per line. */
function details(f: Finding, channel: ChannelVerdict | null): string {
  const lines = [f.message, ''];
  lines.push(`value:    ${f.value === null ? 'not measured' : numberText(f.value, 6) + (f.unit ? ` ${f.unit}` : '')}`);
  lines.push(`limit:    ${f.limit}`);
  if (f.at !== null) lines.push(`at:       ${spanText(f.at)}`);
  lines.push(`severity: ${f.severity}`);
  lines.push(`check:    ${f.check}`);
  if (channel !== null) {
    const about = [`index ${channel.index}`, channel.unit, channel.sensor, channel.group && `group ${channel.group}`].filter(Boolean);
    lines.push(`channel:  ${channel.name} (${about.join(', ')})`);
  }
  return lines.join('\n');
}

/**
 * Channel names as testcase names. Two channels of one recording may share a name, and
 * GitLab keeps only the first of duplicate testcase names, so those get their index.
 */
function channelLabels(channels: ChannelVerdict[]): string[] {
  const seen = new Map<string, number>();
  for (const c of channels) seen.set(c.name, (seen.get(c.name) ?? 0) + 1);
  return channels.map((c) => (c.name === '' ? `#${c.index}` : seen.get(c.name)! > 1 ? `${c.name} #${c.index}` : c.name));
}

/** A safety net behind channelLabels: a repeated name gets ` (2)`, ` (3)`, ... */
function uniqueNames(): (name: string) => string {
  const used = new Set<string>();
  return (name) => {
    let out = name;
    for (let k = 2; used.has(out); k++) out = `${name} (${k})`;
    used.add(out);
    return out;
  };
}

/**
 * The builder writes bodies as CDATA and splits only the first `]]>` it meets; a second one
 * would end the section early. No message should hold one, but an error text quotes file
 * contents, so every one is broken up here.
 */
function cdataSafe(text: string): string {
  return text.replaceAll(']]>', ']] >');
}

/**
 * The suite timestamp in the form the common JUnit schema gives it, `YYYY-MM-DDTHH:MM:SS`
 * without a zone; written in UTC (createdAt is an ISO instant). Null when createdAt is not a
 * date, so a bad value leaves the attribute out instead of making the XML invalid.
 */
function junitTimestamp(createdAt: string): string | null {
  const t = new Date(createdAt);
  if (Number.isNaN(t.getTime())) return null;
  return t.toISOString().slice(0, 19);
}
