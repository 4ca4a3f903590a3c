import { requirePermission } from "../.server/guards.server";
import { openOutputForDownload } from "../.server/outputs.server";
import type { Route } from "./+types/output-download";

/** Streams an output file. Consumers get only published outputs; the team gets any. */
export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requirePermission(request, { output: ["download"] });
  const opened = await openOutputForDownload(params.outputId, user.role);
  if (!opened) throw new Response("No such output, or it is not published.", { status: 404 });
  const { output, stream } = opened;
  return new Response(stream, {
    headers: {
      "Content-Type": output.mediaType,
      "Content-Length": String(output.sizeBytes),
      "Content-Disposition": `attachment; filename="${output.fileName.replace(/"/g, "")}"`,
      "Cache-Control": "private, no-store",
    },
  });
}
