import type { ReactNode } from "react";

export interface Column {
  label: string;
  /** Numbers line up on the right. */
  numeric?: boolean;
  className?: string;
}

/** The framed table of the console's list pages: a header row, then the rows the page gives. */
export function ListTable({ columns, children }: { columns: Column[]; children: ReactNode }) {
  return (
    <div className="overflow-hidden rounded-card border border-rule bg-card">
      <table className="w-full text-sm">
        <thead className="bg-paper text-left text-ink-soft">
          <tr>
            {columns.map((c, i) => (
              <th key={i} className={`px-4 py-2 font-medium ${c.numeric ? "text-right" : ""} ${c.className ?? ""}`}>
                {c.label}
              </th>
            ))}
          </tr>
        </thead>
        <tbody>{children}</tbody>
      </table>
    </div>
  );
}
