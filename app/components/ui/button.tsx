import { forwardRef } from "react";
import { cx } from "./cx";

type Tone = "primary" | "secondary" | "quiet" | "danger";
type Size = "sm" | "md";

const tones: Record<Tone, string> = {
  primary: "bg-accent text-accent-ink hover:bg-accent-strong border-transparent font-medium",
  secondary: "bg-raised text-ink hover:border-ink-faint border-line",
  quiet: "bg-transparent text-ink-muted hover:text-ink hover:bg-raised border-transparent",
  danger: "bg-transparent text-danger hover:bg-danger/10 border-danger/50",
};
const sizes: Record<Size, string> = { sm: "h-7 px-2.5 text-xs", md: "h-9 px-3.5 text-sm" };

export type ButtonProps = React.ButtonHTMLAttributes<HTMLButtonElement> & { tone?: Tone; size?: Size };

export const Button = forwardRef<HTMLButtonElement, ButtonProps>(function Button(
  { tone = "secondary", size = "md", className, type = "button", ...rest },
  ref,
) {
  return (
    <button
      ref={ref}
      type={type}
      className={cx(
        "inline-flex items-center justify-center gap-1.5 rounded border transition-colors disabled:cursor-not-allowed disabled:opacity-50",
        tones[tone],
        sizes[size],
        className,
      )}
      {...rest}
    />
  );
});

/** A link styled as a button, for navigation that looks like an action. */
export function buttonClass(tone: Tone = "secondary", size: Size = "md", className?: string): string {
  return cx("inline-flex items-center justify-center gap-1.5 rounded border transition-colors", tones[tone], sizes[size], className);
}
