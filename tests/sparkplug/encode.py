"""Encode Sparkplug B payloads for the tests, independently of the product's decoder.

The message types are built from sparkplug_b.proto (beside this file) with Python's protobuf
runtime (Debian's python3-protobuf): a small reader of the proto2 subset that file uses turns it
into a FileDescriptorProto, so no protoc is needed. Input on stdin: a JSON list of payloads
  {"timestamp"?, "seq"?, "metrics": [{"name"?, "alias"?, "timestamp"?, "datatype"?, "value"?,
    "field"? (force a value field, for wrong-type payloads), "is_historical"?, "is_null"?}]}
Output: one hex string per payload, one per line.
"""
import json
import os
import re
import sys

from google.protobuf import descriptor_pb2, descriptor_pool, message_factory

FDP = descriptor_pb2.FieldDescriptorProto
SCALARS = {
    "double": FDP.TYPE_DOUBLE, "float": FDP.TYPE_FLOAT, "int64": FDP.TYPE_INT64, "uint64": FDP.TYPE_UINT64,
    "int32": FDP.TYPE_INT32, "uint32": FDP.TYPE_UINT32, "bool": FDP.TYPE_BOOL, "string": FDP.TYPE_STRING,
    "bytes": FDP.TYPE_BYTES,
}
LABELS = {"optional": FDP.LABEL_OPTIONAL, "repeated": FDP.LABEL_REPEATED, "required": FDP.LABEL_REQUIRED}
MAX_FIELD = 536870912  # extension range end: 2^29 (max field number + 1)


def tokens(text):
    text = re.sub(r"//[^\n]*", "", text)
    return re.findall(r"[A-Za-z_][A-Za-z0-9_.]*|\d+|[{}=;]|\"[^\"]*\"", text)


class Reader:
    def __init__(self, toks):
        self.t, self.i = toks, 0
        self.fields = []  # (field proto, scope) to resolve after all types are known
        self.types = {}   # full name -> "message" | "enum"

    def next(self):
        tok = self.t[self.i]
        self.i += 1
        return tok

    def expect(self, tok):
        got = self.next()
        if got != tok:
            raise SyntaxError(f"expected {tok!r}, got {got!r}")

    def file(self):
        f = descriptor_pb2.FileDescriptorProto(name="sparkplug_b.proto", syntax="proto2")
        while self.i < len(self.t):
            tok = self.next()
            if tok == "syntax":
                self.expect("="); self.next(); self.expect(";")
            elif tok == "package":
                f.package = self.next(); self.expect(";")
            elif tok == "option":
                while self.next() != ";":
                    pass
            elif tok == "enum":
                self.enum(f.enum_type.add(), f.package)
            elif tok == "message":
                self.message(f.message_type.add(), f.package)
            else:
                raise SyntaxError(f"unexpected {tok!r}")
        return f

    def enum(self, e, scope):
        e.name = self.next()
        self.types[f"{scope}.{e.name}"] = "enum"
        self.expect("{")
        while (tok := self.next()) != "}":
            self.expect("=")
            e.value.add(name=tok, number=int(self.next()))
            self.expect(";")

    def message(self, m, scope, ):
        m.name = self.next()
        full = f"{scope}.{m.name}"
        self.types[full] = "message"
        self.expect("{")
        oneof = None
        while True:
            tok = self.next()
            if tok == "}":
                if oneof is not None:
                    oneof = None
                    continue
                return
            if tok == "message":
                self.message(m.nested_type.add(), full)
            elif tok == "enum":
                self.enum(m.enum_type.add(), full)
            elif tok == "oneof":
                m.oneof_decl.add(name=self.next())
                self.expect("{")
                oneof = len(m.oneof_decl) - 1
            elif tok == "extensions":
                start = int(self.next()); self.expect("to"); end = self.next(); self.expect(";")
                m.extension_range.add(start=start, end=MAX_FIELD if end == "max" else int(end) + 1)
            else:
                label = FDP.LABEL_OPTIONAL
                if tok in LABELS:
                    label, tok = LABELS[tok], self.next()
                name = self.next(); self.expect("=")
                fd = m.field.add(name=name, number=int(self.next()), label=label)
                self.expect(";")
                if oneof is not None:
                    fd.oneof_index = oneof
                if tok in SCALARS:
                    fd.type = SCALARS[tok]
                else:
                    self.fields.append((fd, full, tok))

    def resolve(self):
        for fd, scope, name in self.fields:
            parts = scope.split(".")
            for k in range(len(parts), 0, -1):
                cand = ".".join(parts[:k] + [name])
                if cand in self.types:
                    fd.type_name = "." + cand
                    fd.type = FDP.TYPE_MESSAGE if self.types[cand] == "message" else FDP.TYPE_ENUM
                    break
            else:
                raise SyntaxError(f"unknown type {name} in {scope}")


def payload_class():
    here = os.path.dirname(os.path.abspath(__file__))
    with open(os.path.join(here, "sparkplug_b.proto")) as fh:
        r = Reader(tokens(fh.read()))
    f = r.file()
    r.resolve()
    pool = descriptor_pool.DescriptorPool()
    pool.Add(f)
    desc = pool.FindMessageTypeByName("org.eclipse.tahu.protobuf.Payload")
    if hasattr(message_factory, "GetMessageClass"):
        return message_factory.GetMessageClass(desc)
    return message_factory.MessageFactory(pool).GetPrototype(desc)


# the value field of each datatype (Sparkplug 3.0, sparkplug_b.proto's Metric.value oneof)
FIELD_OF = {1: "int_value", 2: "int_value", 3: "int_value", 5: "int_value", 6: "int_value",
            4: "long_value", 7: "long_value", 8: "long_value", 13: "long_value",
            9: "float_value", 10: "double_value", 11: "boolean_value", 12: "string_value",
            14: "string_value", 15: "string_value", 17: "bytes_value"}


def encode(spec, Payload):
    p = Payload()
    for key in ("timestamp", "seq", "uuid"):
        if key in spec:
            setattr(p, key, spec[key])
    for ms in spec.get("metrics", []):
        m = p.metrics.add()
        for key in ("name", "alias", "timestamp", "datatype", "is_historical", "is_null", "is_transient"):
            if key in ms:
                setattr(m, key, ms[key])
        if "value" in ms and ms["value"] is not None:
            field = ms.get("field") or FIELD_OF[ms["datatype"]]
            v = ms["value"]
            if field == "int_value":
                v = int(v) & 0xFFFFFFFF      # signed kinds go as two's complement in a uint32
            elif field == "long_value":
                v = int(v) & 0xFFFFFFFFFFFFFFFF
            elif field in ("float_value", "double_value"):
                v = float(v)                  # "nan", "inf" strings become IEEE values
            elif field == "bytes_value":
                v = bytes.fromhex(v)
            setattr(m, field, v)
    return p.SerializeToString()


if __name__ == "__main__":
    Payload = payload_class()
    for spec in json.load(sys.stdin):
        print(encode(spec, Payload).hex())
