import { type RouteConfig, index, layout, prefix, route } from "@react-router/dev/routes";

export default [
  route("sign-in", "routes/sign-in.tsx"),
  route("sign-out", "routes/sign-out.ts"),
  route("healthz", "routes/healthz.ts"),
  route("outputs/:outputId/download", "routes/output-download.ts"),
  route("jobs/:jobId/live", "routes/job-live.ts"),
  ...prefix("api", [
    route("auth/*", "routes/api.auth.ts"),
    route("processes", "routes/api.processes.ts"),
    route("processes/:processId", "routes/api.process.ts"),
    route("processes/:processId/execution", "routes/api.process-execution.ts"),
    route("jobs", "routes/api.jobs.ts"),
    route("jobs/:jobId", "routes/api.job.ts"),
    route("jobs/:jobId/results", "routes/api.job-results.ts"),
    route("datasets", "routes/api.datasets.ts"),
    route("datasets/:datasetId", "routes/api.dataset.ts"),
  ]),
  layout("routes/console.tsx", [
    index("routes/home.tsx"),
    route("datasets", "routes/datasets.tsx"),
    route("datasets/:datasetId", "routes/dataset.tsx"),
    route("jobs", "routes/jobs.tsx"),
    route("jobs/:jobId", "routes/job.tsx"),
    route("library", "routes/library.tsx"),
  ]),
] satisfies RouteConfig;
