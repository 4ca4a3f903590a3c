import { sql } from "drizzle-orm";
import { type AnySQLiteColumn, index, integer, real, sqliteTable, text, uniqueIndex } from "drizzle-orm/sqlite-core";

const createdAt = () =>
  integer("created_at", { mode: "timestamp_ms" })
    .notNull()
    .default(sql`(unixepoch() * 1000)`);

// ---- better-auth (core tables plus the admin plugin's role and ban fields) ----

export const user = sqliteTable("user", {
  id: text("id").primaryKey(),
  name: text("name").notNull(),
  email: text("email").notNull().unique(),
  emailVerified: integer("email_verified", { mode: "boolean" }).notNull().default(false),
  image: text("image"),
  role: text("role").notNull().default("consumer"),
  banned: integer("banned", { mode: "boolean" }).default(false),
  banReason: text("ban_reason"),
  banExpires: integer("ban_expires", { mode: "timestamp_ms" }),
  createdAt: createdAt(),
  updatedAt: integer("updated_at", { mode: "timestamp_ms" }).notNull().default(sql`(unixepoch() * 1000)`),
});

export const session = sqliteTable(
  "session",
  {
    id: text("id").primaryKey(),
    expiresAt: integer("expires_at", { mode: "timestamp_ms" }).notNull(),
    token: text("token").notNull().unique(),
    createdAt: createdAt(),
    updatedAt: integer("updated_at", { mode: "timestamp_ms" }).notNull(),
    ipAddress: text("ip_address"),
    userAgent: text("user_agent"),
    userId: text("user_id")
      .notNull()
      .references(() => user.id, { onDelete: "cascade" }),
    impersonatedBy: text("impersonated_by"),
  },
  (t) => [index("session_user_idx").on(t.userId)],
);

export const account = sqliteTable(
  "account",
  {
    id: text("id").primaryKey(),
    accountId: text("account_id").notNull(),
    providerId: text("provider_id").notNull(),
    userId: text("user_id")
      .notNull()
      .references(() => user.id, { onDelete: "cascade" }),
    accessToken: text("access_token"),
    refreshToken: text("refresh_token"),
    idToken: text("id_token"),
    accessTokenExpiresAt: integer("access_token_expires_at", { mode: "timestamp_ms" }),
    refreshTokenExpiresAt: integer("refresh_token_expires_at", { mode: "timestamp_ms" }),
    scope: text("scope"),
    password: text("password"),
    createdAt: createdAt(),
    updatedAt: integer("updated_at", { mode: "timestamp_ms" }).notNull(),
  },
  (t) => [index("account_user_idx").on(t.userId)],
);

export const verification = sqliteTable("verification", {
  id: text("id").primaryKey(),
  identifier: text("identifier").notNull(),
  value: text("value").notNull(),
  expiresAt: integer("expires_at", { mode: "timestamp_ms" }).notNull(),
  createdAt: createdAt(),
  updatedAt: integer("updated_at", { mode: "timestamp_ms" }).notNull().default(sql`(unixepoch() * 1000)`),
});

// ---- Lissom ----

export const datasets = sqliteTable("datasets", {
  id: text("id").primaryKey(),
  name: text("name").notNull().unique(),
  latestVersion: integer("latest_version").notNull().default(0),
  createdBy: text("created_by").references(() => user.id, { onDelete: "set null" }),
  createdAt: createdAt(),
});

/** A re-upload under the same dataset name is a new version; versions are never edited. */
export const datasetVersions = sqliteTable(
  "dataset_versions",
  {
    id: text("id").primaryKey(),
    datasetId: text("dataset_id")
      .notNull()
      .references(() => datasets.id, { onDelete: "cascade" }),
    version: integer("version").notNull(),
    fileName: text("file_name").notNull(),
    format: text("format").notNull(),
    sizeBytes: integer("size_bytes").notNull(),
    storagePath: text("storage_path").notNull(),
    summary: text("summary", { mode: "json" }).notNull(),
    createdBy: text("created_by").references(() => user.id, { onDelete: "set null" }),
    createdAt: createdAt(),
  },
  (t) => [uniqueIndex("dataset_versions_dataset_version").on(t.datasetId, t.version)],
);

/** A named, versioned list of steps; editing makes a new row with version + 1. */
export const definitions = sqliteTable(
  "definitions",
  {
    id: text("id").primaryKey(),
    name: text("name").notNull(),
    version: integer("version").notNull(),
    description: text("description"),
    steps: text("steps", { mode: "json" }).notNull(),
    /** Output formats the definition writes. */
    formats: text("formats", { mode: "json" }).notNull().default(sql`'["geojson"]'`),
    /** Retry defaults for jobs of this definition (infrastructure failures only). */
    maxAttempts: integer("max_attempts").notNull().default(3),
    backoffMs: integer("backoff_ms").notNull().default(2000),
    createdBy: text("created_by").references(() => user.id, { onDelete: "set null" }),
    createdAt: createdAt(),
  },
  (t) => [uniqueIndex("definitions_name_version").on(t.name, t.version)],
);

/** One execution of a list of steps on a dataset version. Status words: OGC API - Processes. */
export const jobs = sqliteTable(
  "jobs",
  {
    id: text("id").primaryKey(),
    processId: text("process_id").notNull(),
    /** The BullMQ job id of the current run; a manual retry makes a new one. */
    queueId: text("queue_id"),
    inputs: text("inputs", { mode: "json" }).notNull(),
    definitionId: text("definition_id").references(() => definitions.id, { onDelete: "set null" }),
    /** Set on the chunk jobs of a fanned-out job: the job whose output they make together. */
    parentId: text("parent_id").references((): AnySQLiteColumn => jobs.id, { onDelete: "cascade" }),
    chunkIndex: integer("chunk_index"),
    /** Input feature indexes [start, end) a chunk job covers. */
    featureStart: integer("feature_start"),
    featureEnd: integer("feature_end"),
    scheduleId: text("schedule_id").references((): AnySQLiteColumn => schedules.id, { onDelete: "set null" }),
    datasetVersionId: text("dataset_version_id")
      .notNull()
      .references(() => datasetVersions.id, { onDelete: "restrict" }),
    steps: text("steps", { mode: "json" }).notNull(),
    status: text("status", { enum: ["accepted", "running", "successful", "failed", "dismissed"] })
      .notNull()
      .default("accepted"),
    message: text("message"),
    progress: integer("progress").notNull().default(0),
    featuresDone: integer("features_done").notNull().default(0),
    featuresTotal: integer("features_total"),
    priority: integer("priority").notNull().default(0),
    maxAttempts: integer("max_attempts").notNull().default(3),
    submittedBy: text("submitted_by").references(() => user.id, { onDelete: "set null" }),
    createdAt: createdAt(),
    startedAt: integer("started_at", { mode: "timestamp_ms" }),
    finishedAt: integer("finished_at", { mode: "timestamp_ms" }),
    updatedAt: integer("updated_at", { mode: "timestamp_ms" }).notNull().default(sql`(unixepoch() * 1000)`),
  },
  (t) => [index("jobs_status_idx").on(t.status), index("jobs_created_idx").on(t.createdAt), index("jobs_parent_idx").on(t.parentId)],
);

export const attempts = sqliteTable(
  "attempts",
  {
    id: integer("id").primaryKey({ autoIncrement: true }),
    jobId: text("job_id")
      .notNull()
      .references(() => jobs.id, { onDelete: "cascade" }),
    number: integer("number").notNull(),
    status: text("status", { enum: ["running", "successful", "failed", "dismissed"] }).notNull(),
    error: text("error"),
    startedAt: integer("started_at", { mode: "timestamp_ms" }).notNull(),
    finishedAt: integer("finished_at", { mode: "timestamp_ms" }),
  },
  (t) => [uniqueIndex("attempts_job_number").on(t.jobId, t.number)],
);

export const logEntries = sqliteTable(
  "log_entries",
  {
    id: integer("id").primaryKey({ autoIncrement: true }),
    jobId: text("job_id")
      .notNull()
      .references(() => jobs.id, { onDelete: "cascade" }),
    attempt: integer("attempt"),
    time: integer("time", { mode: "timestamp_ms" }).notNull(),
    level: text("level", { enum: ["debug", "info", "warn", "error"] }).notNull(),
    message: text("message").notNull(),
    featureIndex: integer("feature_index"),
  },
  (t) => [index("log_entries_job_idx").on(t.jobId, t.id)],
);

export const featureReports = sqliteTable(
  "feature_reports",
  {
    id: integer("id").primaryKey({ autoIncrement: true }),
    jobId: text("job_id")
      .notNull()
      .references(() => jobs.id, { onDelete: "cascade" }),
    featureIndex: integer("feature_index").notNull(),
    verticesIn: integer("vertices_in").notNull(),
    segmentsOut: integer("segments_out").notNull(),
    maxDeviation: real("max_deviation").notNull(),
    rmsDeviation: real("rms_deviation").notNull(),
    status: text("status", { enum: ["ok", "repaired", "skipped", "error"] }).notNull(),
    reason: text("reason"),
  },
  (t) => [uniqueIndex("feature_reports_job_feature").on(t.jobId, t.featureIndex)],
);

export const outputs = sqliteTable(
  "outputs",
  {
    id: text("id").primaryKey(),
    jobId: text("job_id")
      .notNull()
      .references(() => jobs.id, { onDelete: "cascade" }),
    format: text("format").notNull(),
    fileName: text("file_name").notNull(),
    mediaType: text("media_type").notNull(),
    storagePath: text("storage_path").notNull(),
    sizeBytes: integer("size_bytes").notNull(),
    metadata: text("metadata", { mode: "json" }).notNull(),
    published: integer("published", { mode: "boolean" }).notNull().default(false),
    publishedAt: integer("published_at", { mode: "timestamp_ms" }),
    publishedBy: text("published_by").references(() => user.id, { onDelete: "set null" }),
    createdAt: createdAt(),
  },
  (t) => [index("outputs_job_idx").on(t.jobId), index("outputs_published_idx").on(t.published)],
);

export const schedules = sqliteTable("schedules", {
  id: text("id").primaryKey(),
  definitionId: text("definition_id")
    .notNull()
    .references(() => definitions.id, { onDelete: "cascade" }),
  datasetId: text("dataset_id")
    .notNull()
    .references(() => datasets.id, { onDelete: "cascade" }),
  cron: text("cron").notNull(),
  timezone: text("timezone").notNull().default("UTC"),
  paused: integer("paused", { mode: "boolean" }).notNull().default(false),
  lastRunAt: integer("last_run_at", { mode: "timestamp_ms" }),
  createdBy: text("created_by").references(() => user.id, { onDelete: "set null" }),
  createdAt: createdAt(),
});

/** Worker processes' heartbeats, for /healthz and the board. */
export const workers = sqliteTable("workers", {
  id: text("id").primaryKey(),
  hostname: text("hostname").notNull(),
  pid: integer("pid").notNull(),
  mode: text("mode", { enum: ["embedded", "redis"] }).notNull(),
  concurrency: integer("concurrency").notNull(),
  startedAt: integer("started_at", { mode: "timestamp_ms" }).notNull(),
  heartbeatAt: integer("heartbeat_at", { mode: "timestamp_ms" }).notNull(),
  stoppedAt: integer("stopped_at", { mode: "timestamp_ms" }),
});
