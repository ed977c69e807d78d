/** An operator-area choice of one site; the empty value means the whole site (label given by the caller). */
import { IdOptions } from "@/app/_components/id-options";

export function AreaSelect({
  value,
  onChange,
  areas,
  emptyLabel,
  className,
  disabled,
}: {
  value: string;
  onChange: (areaId: string) => void;
  areas: { id: number; name: string }[];
  emptyLabel: string;
  className: string;
  disabled?: boolean;
}) {
  return (
    <select value={value} onChange={(e) => onChange(e.target.value)} className={className} disabled={disabled}>
      <option value="">{emptyLabel}</option>
      <IdOptions rows={areas} label="name" />
    </select>
  );
}
