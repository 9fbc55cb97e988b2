/**
 * Shapes of the API replies the dashboard reads (JSON: dates are ISO strings). They mirror
 * apps/api (controllers' return types, Prisma models); only the fields the screens use are listed.
 */

export type Role = 'METALLURGIST' | 'QUALITY' | 'ADMIN';

export interface PublicUser {
  id: string;
  email: string;
  displayName: string;
  roles: Role[];
  active: boolean;
  createdAt: string;
}

export interface LoginReply {
  token: string;
  tokenType: 'Bearer';
  expiresAt: string;
  user: PublicUser;
}

export interface Page<T> {
  items: T[];
  total: number;
  nextCursor: string | null;
}

export interface Channel {
  id: string;
  equipmentId: string;
  code: string;
  quantity: string;
  role: string;
  createdAt: string;
}

export interface Equipment {
  id: string;
  lineId: string;
  kind: 'FURNACE' | 'BATH';
  code: string;
  name: string;
  createdAt: string;
  channels: Channel[];
}

export interface Line {
  id: string;
  code: string;
  name: string;
  timeZone: string;
  hCoefficientByAgitation: Record<string, number> | null;
  createdAt: string;
  equipment: Equipment[];
}

export type BatchStatus = 'PLANNED' | 'IN_FURNACE' | 'IN_TRANSFER' | 'IN_BATH' | 'DONE';
export type LoadEventKind = 'CHARGED' | 'OUT_OF_FURNACE' | 'INTO_BATH' | 'OUT_OF_BATH';

export interface Batch {
  id: string;
  code: string;
  lineId: string;
  heatId: string;
  specVersionId: string;
  partCount: number;
  weightKg: number;
  sectionShape: 'PLATE' | 'CYLINDER' | 'SQUARE_BAR';
  sectionSizeMm: number;
  status: BatchStatus;
  scheduledHoldMin: number | null;
  stale: boolean;
  staleSince: string | null;
  createdAt: string;
  updatedAt: string;
}

export interface BatchListItem extends Batch {
  line: { code: string };
  heat: { heatNumber: string };
  specVersion: { version: number; spec: { id: string; code: string } };
}

export interface LoadEvent {
  id: string;
  batchId: string;
  kind: LoadEventKind;
  at: string;
  equipmentId: string;
  equipmentCode: string;
  receivedAt: string;
}

export interface ChannelSummary {
  channelId: string;
  channelCode: string;
  equipmentId: string;
  equipmentCode: string;
  equipmentKind: string;
  quantity: string;
  role: string;
  count: number;
  min: number | null;
  max: number | null;
  first: { t: string; value: number } | null;
  last: { t: string; value: number } | null;
}

export type DeviationStatus = 'OPEN' | 'ACKNOWLEDGED' | 'DISPOSITIONED' | 'CLOSED' | 'CLEARED';
export type DeviationSeverity = 'MINOR' | 'MAJOR' | 'CRITICAL';
export type Disposition = 'USE_AS_IS' | 'RETREAT' | 'SCRAP' | 'CONCESSION';

export interface Deviation {
  id: string;
  batchId: string | null;
  lineId: string;
  productSpecId: string | null;
  channelId: string | null;
  rule: string;
  severity: DeviationSeverity;
  status: DeviationStatus;
  message: string;
  details: Record<string, unknown> | null;
  conditionPresent: boolean;
  disposition: Disposition | null;
  dispositionReason: string | null;
  dispositionRef: string | null;
  signer: string | null;
  dispositionedAt: string | null;
  acknowledgedAt: string | null;
  closedAt: string | null;
  clearedAt: string | null;
  version: number;
  openedAt: string;
  lastEvaluatedAt: string;
  updatedAt: string;
}

export interface DeviationListItem extends Deviation {
  batch: { code: string } | null;
  line: { code: string };
  channel: { code: string } | null;
}

export interface DeviationAudit {
  id: string;
  deviationId: string;
  at: string;
  action: string;
  actorKind: 'USER' | 'SYSTEM';
  actor: string;
  fromStatus: DeviationStatus | null;
  toStatus: DeviationStatus;
  reason: string | null;
  disposition: Disposition | null;
  details: unknown;
}

export interface DeviationWithAudit extends DeviationListItem {
  audits: DeviationAudit[];
}

export interface LabResult {
  id: string;
  batchId: string;
  kind: 'HARDNESS' | 'RETAINED_AUSTENITE' | 'TENSILE' | 'IMPACT';
  values: Record<string, unknown>;
  scale: string | null;
  testStandard: string | null;
  externalRef: string;
  measuredAt: string | null;
  postedAt: string;
}

export interface PredictionRowApi {
  id: string;
  batchId: string;
  version: number;
  modelVersion: string;
  watermark: string | null;
  phase: string;
  result: unknown;
  createdAt: string;
}

export interface BatchDetail extends Batch {
  line: { id: string; code: string; name: string; timeZone: string };
  heat: { id: string; heatNumber: string; material: 'STEEL' | 'DUCTILE_IRON'; grade: string | null; revision: number; chemistryWtPct: Record<string, number> };
  spec: { id: string; code: string; name: string; versionId: string; version: number; status: string };
  events: LoadEvent[];
  samplesWindow: { from: string; to: string; open: boolean } | null;
  samplesSummary: ChannelSummary[];
  deviations: Deviation[];
  labResults: LabResult[];
  latestPrediction: PredictionRowApi | null;
}

export interface ChannelSeries {
  channelId: string;
  channelCode: string;
  equipmentId: string;
  equipmentCode: string;
  equipmentKind: string;
  quantity: string;
  role: string;
  count: number;
  decimated: boolean;
  bucketMs: number | null;
  points: Array<[number, number]>;
}

export interface BatchSeries {
  batchId: string;
  window: { from: string; to: string; open: boolean } | null;
  channels: ChannelSeries[];
}

export interface Heat {
  id: string;
  heatNumber: string;
  material: 'STEEL' | 'DUCTILE_IRON';
  grade: string | null;
  chemistryWtPct: Record<string, number>;
  source: string;
  revision: number;
  createdAt: string;
  updatedAt: string;
}

export interface HeatRevision {
  id: string;
  heatId: string;
  revision: number;
  material: string;
  grade: string | null;
  chemistryWtPct: Record<string, number>;
  source: string;
  changedBy: string;
  changedAt: string;
  reason: string;
}

export interface HeatWithRevisions extends Heat {
  revisions: HeatRevision[];
}

/** GET /v1/heats/:id/diagram (libs/contracts HeatDiagram; served once issue 4 adds the endpoint). */
export interface HeatDiagram {
  heatId: string;
  material: 'steel' | 'ductile-iron';
  /** Carbon of the austenite drawn for (steel: bulk; ductile iron: matrix carbon at the spec's austenitize). */
  meanCarbonWtPct: number;
  t0: Array<{ tempC: number; t0CarbonWtPct: number; t0PrimeCarbonWtPct: number }>;
  ae3: Array<{ carbonWtPct: number; tempC: number }>;
  ae1C: number;
  bsC: number;
  msC: number;
  advisedBath?: { minTempC: number; maxTempC: number; minHoldMin?: number; reasons?: string[] };
  warnings: string[];
}

/** POST /v1/heats/:id/advice (libs/contracts HeatAdvice; the fields the heat view shows). */
export interface HeatAdvice {
  specVersion: number;
  confidence: number;
  window: { minTempC: number; maxTempC: number; minHoldMin: number; maxHoldMin: number | null } | null;
  edges: { lower: { tempC: number; reasons: string[]; messages: string[] } | null; upper: { tempC: number; reasons: string[]; messages: string[] } | null };
  recommended: { tempC: number; holdMin: number } | null;
  receipt: {
    ok: boolean;
    hardenability: { idealCriticalDiameterMm: number; sectionEquivalentDiameterMm: number; verdict: 'ok' | 'at-risk' | 'insufficient'; message: string };
  };
  warnings: string[];
}

export interface ElementLimit {
  minWtPct?: number;
  maxWtPct?: number;
}

export interface ProcessWindow {
  austenitize: { minTempC: number; maxTempC: number; minMinutes: number; maxMinutes?: number };
  maxTransferS: number;
  bath: { minTempC: number; maxTempC: number; maxExcursionS: number; minHoldMin: number; maxHoldMin: number };
  maxChannelGapS: number;
  flatline: { minDurationS: number; epsilonC: number };
  plausible: { minTempC: number; maxTempC: number; maxRateCPerS: number };
  twinTolerance: { maxDiffC: number; minDurationS: number };
}

export interface AcceptanceCriteria {
  hardness?: { scale: 'HV' | 'HRC' | 'HBW'; min: number; max: number };
  tensile?: { minTensileMPa?: number; maxTensileMPa?: number; minYieldMPa?: number; minElongationPct?: number };
  minImpactJ?: number;
  minBainiteFraction?: number;
  maxFreshMartensiteFraction?: number;
  maxBlockyAusteniteFraction?: number;
  minFilmToBlockRatio?: number;
  maxRetainedAusteniteFraction?: number;
  minMsMarginC?: number;
  minBsMarginC?: number;
  minSiPlusAlWtPct?: number;
}

export interface SpecVersion {
  id: string;
  specId: string;
  version: number;
  status: 'DRAFT' | 'APPROVED' | 'SUPERSEDED';
  createdBy: string | null;
  approvedBy: string | null;
  approvedAt: string | null;
  chemistryLimits: Record<string, ElementLimit>;
  processWindow: ProcessWindow;
  acceptanceCriteria: AcceptanceCriteria;
  createdAt: string;
}

export interface Spec {
  id: string;
  code: string;
  name: string;
  material: 'STEEL' | 'DUCTILE_IRON';
  description: string | null;
  createdAt: string;
  versions: SpecVersion[];
}

export interface ApiKeyView {
  id: string;
  prefix: string;
  label: string;
  scope: 'EQUIPMENT' | 'LAB';
  equipmentIds: string[];
  createdAt: string;
  revokedAt: string | null;
}

export interface CreatedApiKey extends ApiKeyView {
  key: string;
}

export interface CreatedUser {
  user: PublicUser;
  oneTimePassword?: string;
}

export type LiveEvent =
  | { type: 'batch.updated'; batchId: string; lineId: string; at: string }
  | { type: 'deviation.changed'; deviationId: string; batchId: string | null; lineId: string | null; rule: string; status: string; at: string };

// --- pyrometry (issue 8; apps/api/src/pyrometry/README.md) --------------------------------------------

export type DueStatus = 'ok' | 'due-soon' | 'overdue' | 'no-rule';
export type DueItemKind = 'tus' | 'sat' | 'sensor-calibration' | 'instrument-calibration' | 'sensor-replacement' | 'sensor-expiry';

/** A reference value an item or a verdict was computed with; `confirmed` false = check the plant's copy of the standard. */
export interface RuleUsed {
  key: string;
  value: string;
  confirmed: boolean;
  note: string;
}

/** libs/compliance DueItem as JSON. */
export interface DueItem {
  kind: DueItemKind;
  equipmentId: string;
  subjectId: string;
  /** Plant-local calendar date YYYY-MM-DD. */
  dueDate: string | null;
  status: DueStatus;
  causes: string[];
  reason: string;
  lastPassAt: string | null;
  lastFailAt: string | null;
  usesSoFar?: number;
  usesLimit?: number | 'unlimited' | null;
  rules: RuleUsed[];
}

/** The limit a test was judged against (libs/compliance LimitUsed). */
export interface LimitUsed {
  key: string;
  bandC: number;
  text: string;
  confirmed: boolean;
  note: string;
}

export interface PyrometryRecord {
  equipmentId: string;
  furnaceClass: number;
  instrumentationType: string;
  satMethod: string | null;
  standard: string;
  revision: string;
  tusRequired: boolean;
  customerOverlay: { source: string; entries: unknown[] } | null;
  limitUnit: string;
}

export interface CalibrationPointJson {
  atC: number;
  correctionC: number;
}

export interface PyrometrySensor {
  id: string;
  serial: string;
  equipmentId: string | null;
  channelId: string | null;
  use: string;
  thermocoupleType: string;
  expendable: boolean;
  calibrationCertificateRef: string | null;
  calibrationPoints: CalibrationPointJson[];
  calibratedAt: string | null;
  correctionMethod: string;
  installedAt: string;
  retiredAt: string | null;
  priorUses: number;
  priorMaxTempC: number | null;
  expiresOn: string | null;
  usesSoFar?: number;
}

export interface PyrometryInstrument {
  id: string;
  serial: string;
  equipmentId: string | null;
  channelId: string | null;
  use: string;
  statedAccuracy: { plusMinusC: number; pctOfReading?: number | null } | null;
  calibrationCertificateRef: string | null;
  calibrationPoints: CalibrationPointJson[];
  calibratedAt: string | null;
  correctionMethod: string;
  installedAt: string;
  retiredAt: string | null;
}

export interface AccuracyTestRow {
  id: string;
  equipmentId: string;
  sensorId: string;
  testSensorId: string;
  testedAt: string;
  setpointC: number;
  instrumentReadingC: number;
  testSensorReadingC: number;
  verdict: 'pass' | 'fail' | 'invalid';
  passed: boolean;
  referenceId: string;
  recordedBy: string;
  result: { differenceC: number; limit: LimitUsed | null; problems: string[]; notes: string[] };
}

export interface UniformitySurveyRow {
  id: string;
  equipmentId: string;
  setpointC: number;
  startedAt: string;
  endedAt: string;
  verdict: 'pass' | 'fail' | 'invalid';
  passed: boolean;
  referenceId: string;
  recordedBy: string;
  result: {
    tolerance: LimitUsed | null;
    spreadC: number | null;
    worst: { locationId: string; deviationC: number; correctedC: number } | null;
    failedReadings: unknown[];
    problems: string[];
    warnings: string[];
  };
}

export interface SuspectTriggerRow {
  id: string;
  equipmentId: string;
  kind: 'failed-test' | 'found-overdue';
  itemKind: string;
  subjectId: string;
  at: string;
  lastPassAt: string | null;
  sourceId: string | null;
  evidence: { summary?: string } & Record<string, unknown>;
  deviations: Array<{ deviationId: string; batchId: string | null; batchCode: string | null; status: DeviationStatus; disposition: Disposition | null }>;
}

export interface ReferenceSummary {
  id: string;
  standard: string;
  revision: string;
  title: string;
  overlays: string[];
  unconfirmedValues: number;
}

/** GET /v1/equipment/:id/pyrometry */
export type EquipmentPyrometry =
  | { enrolled: false; equipment: Omit<Equipment, 'channels'>; at: string }
  | {
      enrolled: true;
      equipment: Omit<Equipment, 'channels'>;
      at: string;
      timeZone: string;
      record: PyrometryRecord;
      reference: ReferenceSummary;
      compliant: boolean;
      findings: Array<{ kind: string; itemKind: DueItemKind; subjectId: string; reason: string; rules: RuleUsed[] }>;
      dueItems: DueItem[];
      sensors: PyrometrySensor[];
      instruments: PyrometryInstrument[];
      recentAccuracyTests: AccuracyTestRow[];
      recentUniformitySurveys: UniformitySurveyRow[];
    };

/** GET /v1/lines/:id/pyrometry/due */
export interface LineDueList {
  lineId: string;
  lineCode: string;
  timeZone: string;
  at: string;
  equipment: Array<{ equipmentId: string; equipmentCode: string; kind: string; referenceId: string; worstStatus: DueStatus; items: DueItem[] }>;
  testKit: Array<DueItem & { referenceIds: string[] }>;
  notEnrolled: Array<{ equipmentId: string; equipmentCode: string }>;
}

// --- lab calibration of the model (GET /v1/specs/:id/calibration) --------------------------------------

export type CalibratedQuantity = 'hardnessHV' | 'tensileMPa' | 'retainedAusteniteFraction';

export interface CalibrationBand {
  p05: number;
  p50: number;
  p95: number;
}

export interface CalibrationExclusion {
  reason: 'assignable-cause';
  causes: Array<{ deviationId: string; rule: string; severity: string }>;
}

export interface CalibrationHistoryRow {
  labResultId: string;
  externalRef: string | null;
  labKind: string;
  batchId: string;
  batchCode: string;
  measured: number;
  predictionVersion: number;
  raw: CalibrationBand | null;
  band: CalibrationBand | null;
  calibrationApplied: boolean;
  residual: number | null;
  verdict: string;
  excludedBy: CalibrationExclusion | null;
  firstComparedAt: string;
}

export interface CalibrationEffectBatch {
  batchId: string;
  batchCode: string;
  predictionId: string;
  predictionVersion: number;
  raw: CalibrationBand;
  calibrated: CalibrationBand;
  applied: boolean;
  rawWidth: number;
  calibratedWidth: number;
  /** Percent narrower (negative: wider). */
  narrowedPct: number | null;
  /** Calibrated p50 − raw p50. */
  shift: number;
}

export interface QuantityCalibration {
  quantity: CalibratedQuantity;
  unit: string;
  calibration: { n: number; bias: number; sd: number; dof: number; kappa: number; inForce: boolean; updatedAt: string } | null;
  excluded: { results: number; byRule: Record<string, number> };
  history: CalibrationHistoryRow[];
  effect: {
    batches: CalibrationEffectBatch[];
    meanRawWidth: number | null;
    meanCalibratedWidth: number | null;
    meanNarrowedPct: number | null;
    meanShift: number | null;
  };
}

export interface SpecCalibration {
  spec: { id: string; code: string; name: string };
  method: { name: string; minResults: number; discountPerResult: number; effectiveMemoryResults: number; band: string; exclusions: string };
  quantities: QuantityCalibration[];
}
