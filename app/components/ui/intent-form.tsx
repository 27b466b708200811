import { Form } from "react-router";
import { Button, type ButtonProps } from "./button";

/**
 * A one-button form that posts an `intent` (and a few hidden ids) to the page's own action: the
 * shape of every "revoke", "end", "leave" or "remove" control in a table row.
 */
export function IntentButton({
  intent,
  fields = {},
  children,
  size = "sm",
  ...button
}: Omit<ButtonProps, "type" | "name" | "value"> & { intent: string; fields?: Record<string, string> }) {
  return (
    <Form method="post">
      <input type="hidden" name="intent" value={intent} />
      {Object.entries(fields).map(([name, value]) => (
        <input key={name} type="hidden" name={name} value={value} />
      ))}
      <Button type="submit" size={size} {...button}>
        {children}
      </Button>
    </Form>
  );
}
