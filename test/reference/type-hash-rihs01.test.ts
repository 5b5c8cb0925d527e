/**
 * RIHS01 type hashes (src/bag/type-hash.ts) against hashes ROS 2 itself published.
 *
 * Reference hashes, each named beside its check:
 * - ros2/ros2cli, ros2topic/test/test_cli.py (`STD_MSGS_STRING_TYPE_HASH_STR`, "can be found in
 *   std_msgs/msg/String.json"): std_msgs/msg/String.
 * - rosidl_generator_c output (the `*__description.c` files its `idl__description.c.em` writes for
 *   a ROS 2 Kilted build), as committed in hpmicro/hpm_sdk under
 *   middleware/microros/kilted/include/<pkg>/<pkg>/msg/detail/: builtin_interfaces/msg/Time
 *   (time__description.c), geometry_msgs/msg/WrenchStamped and, in its expected-hash table,
 *   geometry_msgs/msg/Vector3, geometry_msgs/msg/Wrench, std_msgs/msg/Header
 *   (wrench_stamped__description.c), example_interfaces/msg/Empty (empty__description.c:
 *   the placeholder member) and example_interfaces/msg/Char (char__description.c: `char` is
 *   uint8).
 * - ros2/rosidl, rosidl_generator_type_description/test/test_serializers.py: the field type ids
 *   and capacities of an array of bounded strings, a bounded sequence of strings, a bounded
 *   wstring.
 *
 * The `.msg` texts are the public ROS 2 interface definitions (comments left out; they do not
 * enter the hash), written here from memory of common_interfaces / example_interfaces.
 */
import { describe, expect, it } from 'vitest';
import { builtinDefinition, builtinTypes } from '../../src/bag/definitions.js';
import { canonicalTypeDescriptionJson, msgFields, typeHash } from '../../src/bag/type-hash.js';

const SEP = '='.repeat(80);
const text = (root: string, deps: Record<string, string> = {}): string =>
  [root, ...Object.entries(deps).map(([k, v]) => `${SEP}\nMSG: ${k}\n${v}`)].join('\n');

const TIME = 'int32 sec\nuint32 nanosec';
const HEADER = 'builtin_interfaces/Time stamp\nstring frame_id';
const VECTOR3 = 'float64 x\nfloat64 y\nfloat64 z';
const WRENCH = 'Vector3  force\nVector3  torque';

const hashOf = (type: string, t: string): string => {
  const r = typeHash(type, t, 'ros2msg', { lookup: () => undefined });
  if (!r.ok) throw new Error(r.reason);
  return r.hash;
};

describe('RIHS01 against ROS 2 published hashes', () => {
  it('std_msgs/msg/String (ros2/ros2cli ros2topic/test/test_cli.py)', () => {
    expect(hashOf('std_msgs/msg/String', '# comment\nstring data')).toBe('RIHS01_df668c740482bbd48fb39d76a70dfd4bd59db1288021743503259e948f6b1a18');
  });

  it('builtin_interfaces/msg/Time (hpmicro/hpm_sdk …/builtin_interfaces/msg/detail/time__description.c)', () => {
    expect(hashOf('builtin_interfaces/msg/Time', TIME)).toBe('RIHS01_b106235e25a4c5ed35098aa0a61a3ee9c9b18d197f398b0e4206cea9acf9c197');
  });

  it('geometry_msgs/msg/Vector3, Wrench, std_msgs/msg/Header (hpmicro/hpm_sdk …/geometry_msgs/msg/detail/wrench_stamped__description.c)', () => {
    expect(hashOf('geometry_msgs/msg/Vector3', VECTOR3)).toBe('RIHS01_cc12fe83e4c02719f1ce8070bfd14aecd40f75a96696a67a2a1f37f7dbb0765d');
    expect(hashOf('geometry_msgs/msg/Wrench', text(WRENCH, { 'geometry_msgs/Vector3': VECTOR3 }))).toBe(
      'RIHS01_018e8519d57c16adbe97c9fe1460ef21fec7e31bc541de3d653a35895677ce52',
    );
    expect(hashOf('std_msgs/msg/Header', text(HEADER, { 'builtin_interfaces/Time': TIME }))).toBe(
      'RIHS01_f49fb3ae2cf070f793645ff749683ac6b06203e41c891e17701b1cb597ce6a01',
    );
  });

  it('geometry_msgs/msg/WrenchStamped: nested types sorted, Header resolved (hpmicro/hpm_sdk …/wrench_stamped__description.c)', () => {
    const expected = 'RIHS01_8dc3deaf06b2ab281f9f9a742a8961c328ca7cec16e3fd6586d3a5c83fa78f77';
    const full = text('std_msgs/Header header\nWrench wrench', {
      'std_msgs/Header': HEADER,
      'builtin_interfaces/Time': TIME,
      'geometry_msgs/Wrench': WRENCH,
      'geometry_msgs/msg/Vector3': VECTOR3,
    });
    expect(hashOf('geometry_msgs/msg/WrenchStamped', full)).toBe(expected);
    // The same from the shipped definitions (the writers' default path).
    const shipped = builtinDefinition('geometry_msgs/msg/WrenchStamped');
    expect(shipped).toBeDefined();
    expect(typeHash('geometry_msgs/msg/WrenchStamped', shipped!)).toEqual({ ok: true, hash: expected });
  });

  it('example_interfaces/msg/Empty and Char (hpmicro/hpm_sdk …/example_interfaces/msg/detail/empty__description.c, char__description.c)', () => {
    expect(hashOf('example_interfaces/msg/Empty', '# only comments\n')).toBe('RIHS01_73c22a7341eeccf8ef504a991e60d4078223f0931a5d5d212800e7c978903c58');
    expect(hashOf('example_interfaces/msg/Char', 'char data')).toBe('RIHS01_320dcd57e1183fb08463cc3ab50bf7e5ce0ecee39f64d15a9e9eeca3384c91a5');
  });
});

describe('byte, char arrays and services against ROS 2 published hashes', () => {
  it('diagnostic_msgs/msg/DiagnosticArray, DiagnosticStatus (byte level), KeyValue (hpmicro/hpm_sdk …/diagnostic_msgs/msg/detail/diagnostic_array__description.c)', () => {
    const KEY_VALUE = 'string key\nstring value';
    const STATUS = 'byte OK=0\nbyte WARN=1\nbyte ERROR=2\nbyte STALE=3\nbyte level\nstring name\nstring message\nstring hardware_id\nKeyValue[] values';
    expect(hashOf('diagnostic_msgs/msg/KeyValue', KEY_VALUE)).toBe('RIHS01_d68081eaa540288c5440753baecef0c4e16e81a5f78ad68902ded5100413bb42');
    expect(hashOf('diagnostic_msgs/msg/DiagnosticStatus', text(STATUS, { 'diagnostic_msgs/KeyValue': KEY_VALUE }))).toBe(
      'RIHS01_b0e3e692ea2d54a8af2f4ef1930e81556a2db55216b771f8a7d2724ed47bf0e4',
    );
    const array = 'RIHS01_5a8a36efb05fb25070fa0fb3810290c0e6cd4862b54a8fb975a1ee8dc55a333e';
    expect(hashOf('diagnostic_msgs/msg/DiagnosticArray', text('std_msgs/Header header # for timestamp\nDiagnosticStatus[] status', {
      'std_msgs/Header': HEADER, 'builtin_interfaces/Time': TIME, 'diagnostic_msgs/DiagnosticStatus': STATUS, 'diagnostic_msgs/KeyValue': KEY_VALUE,
    }))).toBe(array);
    expect(typeHash('diagnostic_msgs/msg/DiagnosticArray', builtinDefinition('diagnostic_msgs/msg/DiagnosticArray')!)).toEqual({ ok: true, hash: array });
  });

  it('example_interfaces/srv/AddTwoInts_Request, _Response, _Event and service_msgs/msg/ServiceEventInfo (char[16], bounded sequences; hpmicro/hpm_sdk …/example_interfaces/srv/detail/add_two_ints__description.c)', () => {
    const INFO = 'uint8 REQUEST_SENT = 0\nuint8 REQUEST_RECEIVED = 1\nuint8 RESPONSE_SENT = 2\nuint8 RESPONSE_RECEIVED = 3\nuint8 event_type\nbuiltin_interfaces/Time stamp\nchar[16] client_gid\nint64 sequence_number';
    expect(hashOf('service_msgs/msg/ServiceEventInfo', text(INFO, { 'builtin_interfaces/Time': TIME }))).toBe('RIHS01_41bcbbe07a75c9b52bc96bfd5c24d7f0fc0a08c0cb7921b3373c5732345a6f45');
    const srv = text('int64 a\nint64 b\n---\nint64 sum', { 'service_msgs/ServiceEventInfo': INFO, 'builtin_interfaces/Time': TIME });
    expect(hashOf('example_interfaces/srv/AddTwoInts_Request', srv)).toBe('RIHS01_000c5fd92d6b2e1a05949348f584d6d652adea1e92d691792011ac2273508302');
    expect(hashOf('example_interfaces/srv/AddTwoInts_Response', srv)).toBe('RIHS01_de5c030d4af33cba2749310b249737b631594703f9300495f48bffb2b44dcc2f');
    expect(hashOf('example_interfaces/srv/AddTwoInts_Event', srv)).toBe('RIHS01_32c1d140259c71e5c355115942bcb31df98b4330e4d906b1b75ccb1c9b3ce6c8');
    // The shipped ServiceEventInfo fills in a .srv text that carries no dependency blocks.
    expect(typeHash('example_interfaces/srv/AddTwoInts_Event', 'int64 a\nint64 b\n---\nint64 sum')).toEqual({ ok: true, hash: 'RIHS01_32c1d140259c71e5c355115942bcb31df98b4330e4d906b1b75ccb1c9b3ce6c8' });
  });
});

describe('field type serialization (ros2/rosidl rosidl_generator_type_description/test/test_serializers.py)', () => {
  it('array of bounded strings, bounded sequence of strings, bounded wstring, nested sequence', () => {
    const f = msgFields('my_pkg/msg/TestThing', 'string<=12[22] a\nstring[<=32] b\nwstring<=12 c\nother_pkg/RefThing ref_thing\nother_pkg/RefThing[] ref_things');
    expect(f[0]).toEqual({ name: 'a', typeId: 69, capacity: 22, stringCapacity: 12, nestedTypeName: '' });
    expect(f[1]).toEqual({ name: 'b', typeId: 113, capacity: 32, stringCapacity: 0, nestedTypeName: '' });
    expect(f[2]).toEqual({ name: 'c', typeId: 22, capacity: 0, stringCapacity: 12, nestedTypeName: '' });
    expect(f[3]).toEqual({ name: 'ref_thing', typeId: 1, capacity: 0, stringCapacity: 0, nestedTypeName: 'other_pkg/msg/RefThing' });
    expect(f[4]).toEqual({ name: 'ref_things', typeId: 145, capacity: 0, stringCapacity: 0, nestedTypeName: 'other_pkg/msg/RefThing' });
  });
});

describe('our own rules (tests of our behaviour)', () => {
  it('constants and default values are not part of the hash; byte is an octet, not a uint8', () => {
    const plain = hashOf('a_pkg/msg/T', 'int32 x\nstring s');
    expect(hashOf('a_pkg/msg/T', 'int32 K=3\nint32 x 7\nstring J = "no"\nstring s "with # hash"')).toBe(plain);
    expect(hashOf('a_pkg/msg/B', 'byte b')).not.toBe(hashOf('a_pkg/msg/B', 'uint8 b'));
    expect(msgFields('a_pkg/msg/B', 'byte b')[0]!.typeId).toBe(16);
  });

  it('the canonical JSON has rosidl key order and separators', () => {
    const types = new Map([['std_msgs/msg/String', { typeName: 'std_msgs/msg/String', fields: msgFields('std_msgs/msg/String', 'string data') }]]);
    expect(canonicalTypeDescriptionJson('std_msgs/msg/String', types)).toBe(
      '{"type_description": {"type_name": "std_msgs/msg/String", "fields": [{"name": "data", "type": {"type_id": 17, "capacity": 0, "string_capacity": 0, "nested_type_name": ""}}]}, "referenced_type_descriptions": []}',
    );
  });

  it('no hash (never a wrong one) when a definition is missing, IDL, or not a message', () => {
    const missing = typeHash('a_pkg/msg/T', 'b_pkg/Unknown u', 'ros2msg', { lookup: () => undefined });
    expect(missing.ok).toBe(false);
    expect(!missing.ok && missing.reason).toMatch(/b_pkg\/msg\/Unknown/);
    expect(typeHash('a_pkg/msg/T', 'module a_pkg { };', 'ros2idl').ok).toBe(false);
    expect(typeHash('a_pkg/msg/T', '', '').ok).toBe(false);
    expect(typeHash('a_pkg/srv/S_Request', 'int32 a').ok).toBe(false);
    expect(typeHash('a_pkg/msg/T', 'int32 x y z w').ok).toBe(false);
    expect(typeHash('a_pkg/msg/T', 'constructor x', 'ros2msg', { lookup: () => undefined }).ok).toBe(false); // no prototype names as primitives
  });

  it('every shipped message type gets a hash (the outputs never write an empty one)', () => {
    const types = builtinTypes();
    expect(types).toEqual(expect.arrayContaining(['antiphon/msg/Belief', 'antiphon/msg/RoleState', 'antiphon/msg/WatchdogStatus', 'antiphon/msg/WatchdogTrip', 'antiphon/msg/ZoneView', 'geometry_msgs/msg/TwistStamped', 'sensor_msgs/msg/JointState']));
    for (const t of types) {
      const d = builtinDefinition(t);
      expect(d, t).toBeDefined();
      const r = typeHash(t, d!);
      expect(r.ok ? r.hash : r.reason, t).toMatch(/^RIHS01_[0-9a-f]{64}$/);
    }
  });
});
