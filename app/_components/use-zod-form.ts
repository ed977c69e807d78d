"use client";
/** react-hook-form with a zod schema as its resolver: the one way the console's forms are set up. */
import { zodResolver } from "@hookform/resolvers/zod";
import { useForm, type DefaultValues, type FieldValues, type UseFormReturn } from "react-hook-form";
import type { z } from "zod";

export function useZodForm<T extends FieldValues>(schema: z.ZodType<T, T>, defaultValues: DefaultValues<T>): UseFormReturn<T> {
  return useForm<T>({ resolver: zodResolver(schema), defaultValues });
}
