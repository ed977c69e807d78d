import { CautionLine } from "@/app/(console)/_shell/caution";

export default function AuthLayout({ children }: { children: React.ReactNode }) {
  return (
    <div className="flex min-h-screen flex-col">
      <main id="main" className="flex flex-1 items-center justify-center px-4 py-12">
        {children}
      </main>
      <footer className="border-t border-line bg-surface px-4 py-3">
        <CautionLine className="mx-auto max-w-3xl text-center" />
      </footer>
    </div>
  );
}
