// What one rule type brings: its check, the profile problems a schema cannot say, the analysis
// settings it needs, and which engine events it judges. rules/index.ts holds one entry per type.
import type { AnalysisEvent, EventKind } from '../../analysis/events.ts';
import type { AnalysisOptions } from '../../analysis/runner.ts';
import type { AnalysisDocument } from '../../engine/document.ts';
import type { CheckResult } from '../report.ts';
import type { FrameRate } from '../timecode.ts';
import type { Rule, RuleType } from '../types.ts';

/** A check before the rule's id, type, severity and source are added (a marginal reading may set its own severity). */
export type Draft = Omit<CheckResult, 'ruleId' | 'type' | 'severity' | 'source'> & {
  severity?: CheckResult['severity'];
};

export interface ProfileIssue {
  field: string;
  message: string;
}

/** One analysis setting a rule feeds: every rule feeding it must give the same value. */
export interface SettingUse {
  setting: string;
  field: string;
  value: number | undefined;
}

/** What a check may need beside the document: the report's frame rate (timecode limits). */
export interface CheckContext {
  frameRate: FrameRate;
}

export interface RuleSpec<R extends Rule> {
  /** The reading, limit and verdict on one document. */
  check(rule: R, doc: AnalysisDocument, context: CheckContext): Draft;
  /** Cross-field problems the schema cannot say (either-or limits, min <= max); `at` is the rule's path. */
  issues?(rule: R, at: string): ProfileIssue[];
  /** The analysis settings this rule sets, so parseProfile can insist they agree. */
  settings?(rule: R, at: string): SettingUse[];
  /** Adds what the analysis needs for the profile's rules of this type (several: the strictest wins). */
  analysis?(rules: R[], options: AnalysisOptions): void;
  /** Engine events this rule judges (each kind is judged by one rule type). */
  events?: readonly EventKind[];
  /** Whether one of those events breaks this rule; every one does when absent. */
  breaks?(rule: R, event: AnalysisEvent, doc: AnalysisDocument): boolean;
}

type Matching<R, T> = R extends { type: infer U } ? (T extends U ? R : never) : never;
/** The rule interface of one type (head-silence and tail-silence share EdgeSilenceRule). */
export type RuleOf<T extends RuleType> = Matching<Rule, T>;

/** One entry per rule type, checked by the compiler. */
export type RuleRegistry = { readonly [T in RuleType]: RuleSpec<RuleOf<T>> };
