"""ADC board framing checked against binascii's CRC, the CRC catalogue, IEC 60751 values worked by hand, and hostile byte streams."""

from __future__ import annotations

import binascii

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import soaklog.drivers.adcframe as adcframe
from soaklog.errors import InputError
from soaklog.drivers.adcframe import (
    MAX_CHANNELS,
    MAX_LINE_BYTES,
    Command,
    Frame,
    FrameDecoder,
    FrameError,
    Reply,
    counts_to_ohm,
    crc16_ccitt_false,
    encode_command,
    encode_frame,
    encode_refusal,
    encode_reply,
    ohm_to_counts,
    parse_command,
)

FS24 = 2**23  # signed 24-bit full scale, 8 388 608


def crc_ref(data: bytes) -> int:
    # Python's binascii.crc_hqx is CRC-CCITT with poly 0x1021, MSB first; with
    # init 0xFFFF it is CRC-16/CCITT-FALSE, an implementation independent of ours
    return binascii.crc_hqx(data, 0xFFFF)


def sealed(body: bytes, *, crc: int | None = None) -> bytes:
    """A board line built by the test itself, with binascii's CRC unless told otherwise."""
    value = crc_ref(body) if crc is None else crc
    return b"@" + body + b"~" + f"{value:04X}".encode() + b"\r\n"


# ---------------------------------------------------------------- checksum


@pytest.mark.parametrize(
    ("data", "crc"),
    [
        # from memory of the CRC RevEng catalogue, CRC-16/IBM-3740 (alias
        # CRC-16/CCITT-FALSE): width 16, poly 0x1021, init 0xFFFF, check 0x29B1
        (b"123456789", 0x29B1),
        # from memory of the widely circulated CRC-CCITT comparison table,
        # column "initial value 0xFFFF"
        (b"A", 0xB915),
        (b"A" * 256, 0xEA0B),
        # no input leaves the initial value, as xorout is 0 (the catalogue parameters)
        (b"", 0xFFFF),
    ],
)
def test_crc_matches_published_check_values(data: bytes, crc: int) -> None:
    assert crc16_ccitt_false(data) == crc
    assert crc_ref(data) == crc  # the reference agrees, so the table is typed right


@given(st.binary(max_size=300))
def test_crc_agrees_with_binascii_crc_hqx(data: bytes) -> None:
    assert crc16_ccitt_false(data) == crc_ref(data)


# ---------------------------------------------------------------- counts and ohms


@pytest.mark.parametrize(
    ("ohm", "counts", "code"),
    [
        # IEC 60751:2008 table 1: 0 °C -> 100.00 ohm; 100/400 · 2^23 = 2^21 exactly
        (100.0, 2_097_152, "G"),
        # IEC 60751:2008, 100 °C -> 138.5055 ohm (CVD value); worked by hand:
        # 138.5055 / 400 = 0.34626375; · 8 388 608 = 2 904 670.863 -> 2 904 671
        (138.5055, 2_904_671, "G"),
        # IEC 60751:2008 table 1: -200 °C -> 18.52 ohm; 0.0463 · 8 388 608 = 388 392.55 -> 388 393
        (18.52, 388_393, "G"),
        # IEC 60751:2008 table 1: 850 °C -> 390.48 ohm; 0.9762 · 8 388 608 = 8 188 959.13 -> 8 188 959
        (390.48, 8_188_959, "G"),
        # two's complement: +2^23 does not exist, the top code is 2^23 - 1
        (400.0, FS24 - 1, "H"),
        (1e6, FS24 - 1, "H"),
        (-1.0, -20_972, "G"),  # -1/400 · 2^23 = -20 971.52 -> nearest -20 972
        (-400.0, -FS24, "G"),  # -2^23 is the bottom code
        (-500.0, -FS24, "L"),
        (float("inf"), FS24 - 1, "O"),  # an open sensor reads full scale
        (float("nan"), FS24 - 1, "O"),
        (float("-inf"), -FS24, "L"),
    ],
)
def test_ohm_to_counts_is_ratiometric_at_24_bits(ohm: float, counts: int, code: str) -> None:
    assert ohm_to_counts(ohm, 400.0) == (counts, code)


def test_counts_to_ohm_inverts_the_worked_example() -> None:
    # 2 904 671 / 8 388 608 · 400 = 138.505516… ohm, within half a count of the
    # IEC 60751 value 138.5055 (one count is 400 / 2^23 = 47.7 µohm)
    one_count_ohm = 400.0 / FS24
    assert counts_to_ohm(2_904_671, 400.0) == pytest.approx(138.5055, abs=one_count_ohm / 2)
    assert counts_to_ohm(2_097_152, 400.0) == 100.0


def test_other_resolutions_scale_full_scale() -> None:
    # 100/400 of a signed 16-bit full scale (2^15) is 2^13
    assert ohm_to_counts(100.0, 400.0, bits=16) == (8192, "G")
    assert counts_to_ohm(8192, 400.0, bits=16) == 100.0


@pytest.mark.parametrize(("reference", "bits"), [(0.0, 24), (-400.0, 24), (float("nan"), 24), (400.0, 25), (400.0, 4)])
def test_bad_reference_or_resolution_is_refused(reference: float, bits: int) -> None:
    with pytest.raises(InputError):
        ohm_to_counts(100.0, reference, bits=bits)


@given(st.floats(min_value=0.0, max_value=400.0 * (1 - 2.0**-22)))
def test_counts_round_trip_within_half_a_count(ohm: float) -> None:
    counts, code = ohm_to_counts(ohm, 400.0)
    assert code == "G"
    assert abs(counts_to_ohm(counts, 400.0) - ohm) <= 0.5 * 400.0 / FS24 * (1 + 1e-9)


# ---------------------------------------------------------------- encoding


def test_example_frame_has_the_documented_layout() -> None:
    line = encode_frame(Frame(42, 127_944, 0x01, (2_904_671, FS24 - 1), "GO"))
    body = b"D 002A 0001F3C8 01 2904671G 8388607O"  # 42 = 0x2A, 127 944 ms = 0x1F3C8
    assert line == sealed(body)


@pytest.mark.parametrize(
    "kwargs",
    [
        {"seq": 65536},
        {"seq": -1},
        {"tick_ms": 2**32},
        {"flags": 256},
        {"counts": (FS24,), "codes": "G"},
        {"counts": (-FS24 - 1,), "codes": "G"},
        {"counts": (1, 2), "codes": "G"},
        {"counts": (1,), "codes": "X"},
        {"counts": (), "codes": ""},
        {"counts": (0,) * (MAX_CHANNELS + 1), "codes": "G" * (MAX_CHANNELS + 1)},
        {"counts": (1.5,), "codes": "G"},
    ],
)
def test_frames_that_the_format_cannot_carry_are_refused(kwargs: dict[str, object]) -> None:
    args: dict[str, object] = {"seq": 0, "tick_ms": 0, "flags": 0, "counts": (0,), "codes": "G"} | kwargs
    with pytest.raises(InputError):
        Frame(**args)  # type: ignore[arg-type]


frames = st.integers(1, 12).flatmap(
    lambda n: st.builds(
        Frame,
        seq=st.integers(0, 0xFFFF),
        tick_ms=st.integers(0, 2**32 - 1),
        flags=st.integers(0, 0xFF),
        counts=st.tuples(*[st.integers(-FS24, FS24 - 1)] * n),
        codes=st.text("GOHL", min_size=n, max_size=n),
    )
)
words = st.sampled_from(["WHO", "CHANS", "RATE", "EXC", "REF", "GO", "HALT", "?", "X1"])
values = st.text(st.characters(min_codepoint=0x21, max_codepoint=0x7D, exclude_characters="@"), min_size=1, max_size=20)
keys = st.from_regex(r"[a-z][a-z0-9_]{0,8}", fullmatch=True)
replies = st.builds(
    Reply, command=words, ok=st.just(True), fields=st.lists(st.tuples(keys, values), max_size=5).map(tuple)
)
refusals = st.builds(
    Reply,
    command=words,
    ok=st.just(False),
    message=st.text(st.characters(min_codepoint=0x20, max_codepoint=0x7D, exclude_characters="@"), max_size=40),
)
records = st.one_of(frames, replies, refusals)


def encode(record: Frame | Reply) -> bytes:
    if isinstance(record, Frame):
        return encode_frame(record)
    if record.ok:
        return encode_reply(record.command, record.fields)
    return encode_refusal(record.command, record.message)


@given(records)
def test_every_record_round_trips_through_the_decoder(record: Frame | Reply) -> None:
    line = encode(record)
    assert FrameDecoder().feed(line) == [record]
    # the CRC on the wire is binascii's CRC of the body
    assert int(line[-6:-2], 16) == crc_ref(line[1:-7])


def test_refusal_text_cannot_break_the_envelope() -> None:
    line = encode_refusal("RATE", "bad @ value ~ here")
    assert FrameDecoder().feed(line) == [Reply("RATE", False, (), "bad ? value ? here")]


@pytest.mark.parametrize(
    ("word", "fields"),
    [("rate", ()), ("WHO", (("Maker", "x"),)), ("WHO", (("maker", "two words"),)), ("WHO", (("maker", "a~b"),))],
)
def test_replies_that_the_format_cannot_carry_are_refused(word: str, fields: tuple[tuple[str, str], ...]) -> None:
    with pytest.raises(InputError):
        encode_reply(word, fields)


def test_reply_get_finds_a_field() -> None:
    reply = Reply("REF", True, (("ohm", "400"), ("bits", "24")))
    assert reply.get("bits") == "24"
    assert reply.get("nope") is None


# ---------------------------------------------------------------- commands


@pytest.mark.parametrize(
    ("line", "expected"),
    [
        (b"WHO", Command("WHO")),
        (b"rate 20", Command("RATE", ("20",))),
        (b"  exc   0.0001 ", Command("EXC", ("0.0001",))),
        # the CRC of "RATE 5" from binascii, appended by hand
        (b"RATE 5~" + f"{crc_ref(b'RATE 5'):04X}".encode(), Command("RATE", ("5",))),
        (b"RATE 5~" + f"{crc_ref(b'RATE 5'):04x}".encode(), Command("RATE", ("5",))),
    ],
)
def test_commands_parse(line: bytes, expected: Command) -> None:
    assert parse_command(line) == expected


@pytest.mark.parametrize(
    ("line", "reason"),
    [
        (b"RATE 5~" + f"{crc_ref(b'RATE 5') ^ 1:04X}".encode(), "checksum"),
        (b"RATE 5~12", "syntax"),
        (b"", "syntax"),
        (b"   ", "syntax"),
        (b"9LIVES", "syntax"),
        (b"WHO\xff", "non_ascii"),
        (b"WHO\x00", "non_ascii"),
    ],
)
def test_bad_commands_are_reported_not_raised(line: bytes, reason: str) -> None:
    result = parse_command(line)
    assert isinstance(result, FrameError)
    assert result.reason == reason


@given(st.sampled_from(["WHO", "RATE", "EXC", "GO"]), st.lists(values, max_size=3), st.booleans())
def test_commands_round_trip(word: str, args: list[str], checksum: bool) -> None:
    line = encode_command(word.lower(), *args, checksum=checksum)
    assert line.endswith(b"\r\n")
    assert parse_command(line[:-2]) == Command(word, tuple(args))


@given(st.binary(max_size=200))
def test_parse_command_never_raises(line: bytes) -> None:
    assert isinstance(parse_command(line), (Command, FrameError))


# ---------------------------------------------------------------- decoder


@pytest.mark.parametrize(
    ("data", "reason"),
    [
        (sealed(b"D 002A 0001F3C8 00 2904671G", crc=0x0000), "checksum"),
        (b"@D 002A 0001F3C8 00 2904671G~" + f"{crc_ref(b'D 002A 0001F3C8 00 2904671G'):04x}".encode(), "syntax"),
        (b"@D 002A 0001F3C8 00 29\r\n", "truncated"),
        (b"@D 002A 0001F3C8 00 29@", "truncated"),
        (b"@D 002A 0001F3C8 00 29~12\r\n", "truncated"),
        (b"@D 002A 0001F3C8 00 29~xyz!", "syntax"),
        (b"@D 002A 0001F3C8 00 29\xe9046G~0000", "non_ascii"),
        (b"@D 002A\t0001F3C8 00 2904671G~0000", "non_ascii"),
        (sealed(b"D 2A 0001F3C8 00 5G"), "syntax"),  # seq not 4 hex digits
        (sealed(b"D 002a 0001F3C8 00 5G"), "syntax"),  # lower-case hex
        (sealed(b"D 002A 0001F3C8 00 8388608G"), "syntax"),  # beyond 24 bits
        (sealed(b"D 002A 0001F3C8 00 0012G"), "syntax"),  # leading zeros
        (sealed(b"D 002A 0001F3C8 00 +12G"), "syntax"),
        (sealed(b"D 002A 0001F3C8 00 12X"), "syntax"),  # unknown status letter
        (sealed(b"D 002A 0001F3C8 00"), "syntax"),  # no channel
        (sealed(b"D 002A 0001F3C8 00 " + b" ".join([b"1G"] * (MAX_CHANNELS + 1))), "syntax"),
        (sealed(b"Q hello"), "syntax"),  # unknown kind
        (sealed(b"R WHO maker"), "syntax"),  # field without '='
        (sealed(b"Erate bad"), "syntax"),
        (b"hello", "garbage"),
        (b"\x80\xff~~", "garbage"),
    ],
)
def test_bad_input_becomes_one_error_of_the_right_kind(data: bytes, reason: str) -> None:
    out = FrameDecoder().feed(data)
    assert [type(r) for r in out] == [FrameError]
    assert out[0].reason == reason


def test_a_runaway_line_is_cut_at_the_length_limit() -> None:
    frame = Frame(3, 4, 0, (5,), "G")
    out = FrameDecoder().feed(b"@" + b"D" * (MAX_LINE_BYTES + 10) + b"\r\n" + encode_frame(frame))
    assert isinstance(out[0], FrameError)
    assert out[0].reason == "too_long"
    assert out[-1] == frame


def test_line_ends_and_blank_lines_are_not_errors() -> None:
    frame = Frame(1, 2, 0, (3,), "G")
    assert FrameDecoder().feed(b"\r\n\n  " + encode_frame(frame) + b"\r\n\r\n") == [frame]


def test_frames_without_line_ends_are_still_split() -> None:
    a, b = Frame(1, 10, 0, (5,), "G"), Frame(2, 20, 0, (6,), "G")
    stream = encode_frame(a)[:-2] + encode_frame(b)[:-2]
    assert FrameDecoder().feed(stream) == [a, b]


def test_a_frame_is_returned_as_soon_as_its_checksum_arrives() -> None:
    frame = Frame(7, 70, 0, (1, -1), "GG")
    line = encode_frame(frame)
    decoder = FrameDecoder()
    assert decoder.feed(line[:-3]) == []  # one CRC digit missing
    assert decoder.feed(line[-3:-2]) == [frame]
    assert decoder.feed(line[-2:]) == []


def test_corrupted_checksum_is_never_accepted() -> None:
    frame = Frame(9, 90, 0, (100,), "G")
    bad = encode_frame(frame, corrupt=True)
    out = FrameDecoder().feed(bad + encode_frame(frame))
    assert [getattr(r, "reason", r) for r in out] == ["checksum", frame]


def chunked(data: bytes, cuts: list[int]) -> list[bytes]:
    points = sorted({c % (len(data) + 1) for c in cuts})
    pieces, last = [], 0
    for p in points:
        pieces.append(data[last:p])
        last = p
    pieces.append(data[last:])
    return pieces


def feed_all(pieces: list[bytes]) -> list[Frame | Reply | FrameError]:
    decoder = FrameDecoder()
    out: list[Frame | Reply | FrameError] = []
    for piece in pieces:
        out += decoder.feed(piece)
    assert decoder.pending <= MAX_LINE_BYTES + 5
    return out


def valid(out: list[Frame | Reply | FrameError]) -> list[Frame | Reply]:
    return [r for r in out if not isinstance(r, FrameError)]


@settings(max_examples=60)
@given(st.lists(records, min_size=1, max_size=8), st.lists(st.integers(0, 10_000), max_size=30), st.booleans())
def test_any_chunking_of_a_valid_stream_gives_every_record(
    sent: list[Frame | Reply], cuts: list[int], line_ends: bool
) -> None:
    stream = b"".join(encode(r) if line_ends else encode(r)[:-2] for r in sent)
    assert feed_all(chunked(stream, cuts)) == sent


@settings(max_examples=80)
@given(
    st.lists(st.tuples(records, st.binary(max_size=40)), min_size=1, max_size=6),
    st.lists(st.integers(0, 10_000), max_size=20),
)
def test_garbage_between_frames_costs_no_frame_and_fakes_none(
    items: list[tuple[Frame | Reply, bytes]], cuts: list[int]
) -> None:
    # the final line end closes a candidate the last garbage may have opened
    stream = b"".join(encode(r) + junk for r, junk in items) + b"\n"
    out = feed_all(chunked(stream, cuts))
    assert valid(out) == [r for r, _ in items]
    if any(junk.strip(b" \t\r\n") for _, junk in items):
        assert any(isinstance(r, FrameError) for r in out)


@settings(max_examples=80)
@given(
    st.lists(frames, min_size=2, max_size=5),
    st.data(),
)
def test_a_damaged_frame_is_rejected_and_its_neighbours_kept(sent: list[Frame], data: st.DataObject) -> None:
    lines = [encode_frame(f) for f in sent]
    victim = data.draw(st.integers(0, len(lines) - 1))
    line = bytearray(lines[victim])
    # any byte of the frame from '@' to the last CRC digit, changed to anything else
    pos = data.draw(st.integers(0, len(line) - 3))
    line[pos] ^= data.draw(st.integers(1, 255))
    lines[victim] = bytes(line)
    out = feed_all(chunked(b"".join(lines), data.draw(st.lists(st.integers(0, 10_000), max_size=10))))
    # CRC-16 detects every error burst of up to 16 bits, so one changed byte
    # always shows (common knowledge of cyclic codes, e.g. Peterson & Brown 1961)
    assert valid(out) == [f for i, f in enumerate(sent) if i != victim]
    assert any(isinstance(r, FrameError) for r in out)


@settings(max_examples=150)
@given(st.lists(st.binary(max_size=120), max_size=12))
def test_decoder_never_raises_on_arbitrary_bytes(pieces: list[bytes]) -> None:
    out = feed_all(pieces)
    assert all(isinstance(r, (Frame, Reply, FrameError)) for r in out)


@settings(max_examples=60)
@given(st.lists(st.sampled_from([b"@", b"~", b"\r\n", b"D ", b"0", b"A", b"G", b" ", b"\xff", b"R WHO a=b"]), max_size=60))
def test_decoder_never_raises_on_near_miss_frames(pieces: list[bytes]) -> None:
    feed_all(pieces)


def test_the_documented_example_frame_decodes_to_what_the_text_says() -> None:
    doc = adcframe.__doc__ or ""
    example = next(line.strip() for line in doc.splitlines() if line.strip().startswith("@D "))
    assert example.endswith("\\r\\n")  # the line end is written out as text
    line = example[: -len("\\r\\n")].encode("ascii") + b"\r\n"
    # "sequence 42, board time 127 944 ms, 138.5055 ohm -> 2 904 671 counts, and an open input"
    assert FrameDecoder().feed(line) == [Frame(42, 127_944, 0x01, (2_904_671, FS24 - 1), "GO")]
    assert int(line[-6:-2], 16) == crc_ref(line[1:-7])
