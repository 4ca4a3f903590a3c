import { useRef, useState } from "react";
import { Form, useNavigate } from "react-router";
import { ProgressBar } from "./progress-bar";
import { Notice, buttonClass, inputClass } from "./page";

interface Props {
  /** Extensions the server reads, e.g. [".geojson", ".zip"]. */
  accept: string[];
  maxBytesLabel: string;
  serverError?: string;
}

/**
 * Upload by drag and drop or the file picker. With JavaScript the files go to the API with a
 * progress bar (large datasets take a while); without it the plain form posts to the page.
 */
export function UploadForm({ accept, maxBytesLabel, serverError }: Props) {
  const [files, setFiles] = useState<File[]>([]);
  const [progress, setProgress] = useState<number | null>(null);
  const [error, setError] = useState<string | undefined>(serverError);
  const [dragging, setDragging] = useState(false);
  const input = useRef<HTMLInputElement>(null);
  const name = useRef<HTMLInputElement>(null);
  const navigate = useNavigate();

  function choose(list: FileList | null) {
    const chosen = Array.from(list ?? []);
    setFiles(chosen);
    setError(undefined);
    if (input.current && list) input.current.files = list;
  }

  function send(event: React.FormEvent<HTMLFormElement>) {
    if (files.length === 0) return; // let the browser say the field is required
    event.preventDefault();
    const body = new FormData();
    for (const f of files) body.append("file", f, f.name);
    if (name.current?.value.trim()) body.set("name", name.current.value.trim());
    const xhr = new XMLHttpRequest();
    xhr.open("POST", "/api/datasets");
    xhr.upload.onprogress = (e) => e.lengthComputable && setProgress((e.loaded / e.total) * 100);
    xhr.onload = () => {
      const answer = safeJson(xhr.responseText) as { id?: string; detail?: string } | null;
      if (xhr.status === 201 && answer?.id) {
        navigate(`/datasets/${answer.id}`);
      } else {
        setProgress(null);
        setError(answer?.detail ?? `The upload failed (HTTP ${xhr.status}). Try again.`);
      }
    };
    xhr.onerror = () => {
      setProgress(null);
      setError("The connection was lost during the upload. Check the network and try again.");
    };
    setProgress(0);
    xhr.send(body);
  }

  return (
    <Form method="post" encType="multipart/form-data" onSubmit={send} className="space-y-4">
      {error && <Notice tone="error">{error}</Notice>}
      <div
        onDragOver={(e) => {
          e.preventDefault();
          setDragging(true);
        }}
        onDragLeave={() => setDragging(false)}
        onDrop={(e) => {
          e.preventDefault();
          setDragging(false);
          choose(e.dataTransfer.files);
        }}
        className={`rounded-card border-2 border-dashed p-6 text-center text-sm ${dragging ? "border-tide-500 bg-tide-50" : "border-rule bg-paper"}`}
      >
        <p className="font-medium">Drop a dataset here</p>
        <p className="mt-1 text-ink-soft">
          GeoJSON, newline-delimited GeoJSON, a zipped Shapefile, or the loose .shp/.shx/.dbf/.prj/.cpg files together — up to {maxBytesLabel} each.
        </p>
        <label className="mt-3 inline-block cursor-pointer text-tide-600 underline">
          or choose files
          <input
            ref={input}
            name="file"
            type="file"
            multiple
            required
            accept={accept.join(",")}
            className="sr-only"
            onChange={(e) => choose(e.target.files)}
          />
        </label>
        {files.length > 0 && (
          <ul className="mt-3 text-xs text-ink">
            {files.map((f) => (
              <li key={f.name}>
                {f.name} · {(f.size / 1e6).toFixed(f.size > 1e7 ? 0 : 2)} MB
              </li>
            ))}
          </ul>
        )}
      </div>
      <div className="grid gap-4 sm:grid-cols-[1fr_auto] sm:items-end">
        <label className="block text-sm font-medium">
          Name <span className="font-normal text-ink-faint">(optional; an existing name makes a new version)</span>
          <input ref={name} name="name" placeholder="from the file name" className={`mt-1 ${inputClass}`} />
        </label>
        <button type="submit" className={buttonClass} disabled={progress !== null}>
          {progress !== null ? "Uploading…" : "Upload"}
        </button>
      </div>
      {progress !== null && <ProgressBar value={progress} label="Upload progress" />}
    </Form>
  );
}

function safeJson(text: string): unknown {
  try {
    return JSON.parse(text);
  } catch {
    return null;
  }
}
