/**
 * vibgate's library API: open recordings, stream them through the statistics engine, and
 * merge summaries of record parts. Only what is stable is exported here.
 */
export { openRecording, supportedFormats } from './readers/index.js';
export type { Recording, OpenOptions, SampleBlock, ChannelInfo, BlockOptions } from './readers/index.js';
export { summariseBlocks, mergeRecordingSummaries, frameGeometry } from './stats/summarise.js';
export type { RecordingSummary, FrameOptions } from './stats/summarise.js';
export { ChannelAccumulator } from './stats/channel-accumulator.js';
export type { ChannelSummary } from './stats/channel-accumulator.js';
export { mergeChannelSummaries } from './stats/merge.js';
export { channelStats, stationarity, frameSeries } from './stats/channel-stats.js';
export type { ChannelStats, StationarityResult } from './stats/channel-stats.js';
export { reverseArrangements, reverseArrangementsBounds } from './stats/reverse-arrangements.js';
export { inspectRecording } from './cli/inspect.js';
export { loadRules, RulesError } from './rules/load.js';
export type { ResolvedRules, CheckSetting, ChannelSelector } from './rules/types.js';
export { checksForChannel, globMatch } from './rules/select.js';
export { rulesSchema } from './rules/schema.js';
export { checks, getCheck } from './checks/registry.js';
export type { Check, Finding, FindingStatus, Severity, ChannelContext } from './checks/types.js';
export { judgeRecording, unreadableRecording } from './gate/judge.js';
export type { GateResult, RecordingVerdict, ChannelVerdict, Verdict } from './gate/types.js';
export { screenRecording } from './cli/screen.js';
export { junitReport } from './report/junit.js';
export { jsonRecord } from './report/json-record.js';
export { terminalReport } from './report/terminal.js';
export { htmlReport } from './report/html.js';
export type { ReportDetail, ChannelDetail } from './report/detail.js';
export { main } from './cli/main.js';
export { RecordingError, UsageError } from './errors.js';
