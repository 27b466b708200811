import { cx } from "./cx";

export function Table({ className, children }: { className?: string; children: React.ReactNode }) {
  return (
    <div className="overflow-x-auto rounded border border-line">
      <table className={cx("w-full border-collapse text-left text-sm", className)}>{children}</table>
    </div>
  );
}

export function Th({
  children,
  className,
  ...rest
}: React.ThHTMLAttributes<HTMLTableCellElement> & { children?: React.ReactNode }) {
  return (
    <th className={cx("border-b border-line bg-raised px-3 py-2 text-xs font-medium text-ink-muted", className)} {...rest}>
      {children}
    </th>
  );
}

export function Td({
  children,
  className,
  ...rest
}: React.TdHTMLAttributes<HTMLTableCellElement> & { children?: React.ReactNode }) {
  return (
    <td className={cx("border-b border-line/60 px-3 py-2 align-middle", className)} {...rest}>
      {children}
    </td>
  );
}
