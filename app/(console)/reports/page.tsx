import type { Metadata } from "next";
import { EmptyState } from "../_shell/empty-state";

export const metadata: Metadata = { title: "Reports" };

export default function ReportsPage() {
  return (
    <EmptyState title="Reports">
      <p>Alarm-rate figures per operator area and loop-health summaries arrive once alarms and history are recorded.</p>
    </EmptyState>
  );
}
