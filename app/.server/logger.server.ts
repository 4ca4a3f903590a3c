import pino from "pino";

/** JSON lines to stdout (DESIGN.md); LOG_LEVEL picks the threshold. */
export const logger = pino({
  name: "lissom",
  level: process.env.LOG_LEVEL ?? (process.env.NODE_ENV === "test" ? "silent" : "info"),
});
