export { Button, buttonClass } from "./button";
export { Field, Input, inputClass, Select, TextArea } from "./input";
export { IntentButton } from "./intent-form";
export { Notice, Panel } from "./panel";
export { Table, Td, Th } from "./table";
export { toast, Toaster } from "./toast";
export { cx } from "./cx";
