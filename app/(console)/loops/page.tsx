import type { Metadata } from "next";
import { EmptyState } from "../_shell/empty-state";

export const metadata: Metadata = { title: "Loops" };

export default function LoopsPage() {
  return (
    <EmptyState title="Loops">
      <p>The loop inventory, with each loop&apos;s trends, z-plane map and analysis, arrives with the live pipeline.</p>
    </EmptyState>
  );
}
