export { getLoopConfigHandler as GET } from "@/lib/admin/loop-routes";
