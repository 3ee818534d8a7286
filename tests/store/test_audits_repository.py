import math

import pytest
import sqlalchemy as sa

from app.errors import AccessDenied, InputError, NotFound
from app.store import AuditRepository, NewAudit, make_engine, migrate
from app.store.audits import audits_table, decode_cursor, encode_cursor, token_digest
from store.together import run_together


@pytest.fixture
def repository(database_url):
    engine = make_engine(database_url)
    migrate(engine)
    yield AuditRepository(engine)
    engine.dispose()


def new_audit(title="Global temperature, 1998-2012", **overrides) -> NewAudit:
    fields = dict(
        title=title,
        input_document={"series": {"time": [1990.5, 1991.5, 1992.5], "value": [0.1, -0.25, 1 / 3]}},
        result_document={"verdict": {"code": "consistent"}, "long_term": {"slope": 0.018734511234567891}},
        input_sha256="ab" * 32, seed=2**63 - 1, software_version="0.1.0",
        summary={"verdict": {"code": "consistent"}},
    )
    fields.update(overrides)
    return NewAudit(**fields)


def test_created_audit_reads_back_exactly(repository):
    record, owner_token = repository.create(new_audit())
    again = repository.get(record.id)
    assert again == record
    # Floats survive the JSON round trip bit for bit, so a stored result reproduces the numbers shown.
    assert again.result_document["long_term"]["slope"] == 0.018734511234567891
    assert again.input_document["series"]["value"][2] == 1 / 3
    assert again.seed == 2**63 - 1
    assert again.created_at.utcoffset().total_seconds() == 0


def test_ids_and_owner_tokens_are_long_random_and_url_safe(repository):
    ids, tokens = set(), set()
    for _ in range(20):
        record, token = repository.create(new_audit())
        ids.add(record.id)
        tokens.add(token)
    assert len(ids) == 20 and len(tokens) == 20
    for audit_id in ids:
        # 6 bits per URL-safe character: at least 128 bits means at least 22 characters.
        assert len(audit_id) * 6 >= 128
        assert set(audit_id) <= set("ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_")


def test_only_a_hash_of_the_owner_token_is_stored(repository):
    record, owner_token = repository.create(new_audit())
    with repository.engine.connect() as connection:
        row = connection.execute(sa.select(audits_table).where(audits_table.c.id == record.id)).mappings().one()
    assert owner_token not in {str(v) for v in row.values()}
    assert row["owner_token_sha256"] == token_digest(owner_token)


def test_missing_audit_is_not_found(repository):
    with pytest.raises(NotFound, match="no audit with id 'nope'"):
        repository.get("nope")


def test_list_is_newest_first_and_pages_without_overlap(repository):
    created = [repository.create(new_audit(title=f"audit {i}"))[0].id for i in range(7)]
    seen, cursor = [], None
    while True:
        page = repository.list(limit=3, cursor=cursor)
        seen += [item.id for item in page.items]
        cursor = page.next_cursor
        if cursor is None:
            break
    assert seen == created[::-1]


def test_list_filters_by_kind(repository):
    audit_id = repository.create(new_audit())[0].id
    other_id = repository.create(new_audit(kind="correlation"))[0].id
    assert [i.id for i in repository.list(kind="audit").items] == [audit_id]
    assert [i.id for i in repository.list(kind="correlation").items] == [other_id]


def test_reading_by_kind_does_not_find_another_kind(repository):
    audit = repository.create(new_audit())[0]
    correlation, token = repository.create(new_audit(kind="correlation"))
    assert repository.get(audit.id, kind="audit") == audit
    assert repository.get(correlation.id, kind="correlation") == correlation
    assert repository.get(correlation.id) == correlation  # no kind: any record
    with pytest.raises(NotFound, match="no audit with id"):
        repository.get(correlation.id, kind="audit")
    with pytest.raises(NotFound, match="no correlation audit with id"):
        repository.get(audit.id, kind="correlation")


def test_deleting_by_kind_leaves_another_kind_alone(repository):
    correlation, token = repository.create(new_audit(kind="correlation"))
    with pytest.raises(NotFound, match="no audit with id"):
        repository.delete(correlation.id, token, kind="audit")
    assert repository.get(correlation.id) == correlation
    with pytest.raises(AccessDenied, match="correlation audit"):
        repository.delete(correlation.id, None, kind="correlation")
    repository.delete(correlation.id, token, kind="correlation")
    with pytest.raises(NotFound):
        repository.get(correlation.id)


@pytest.mark.parametrize("cursor", ["", "zzz", encode_cursor(5)[:-1] + "!", "czE"[:2]])
def test_a_forged_cursor_is_an_input_error(repository, cursor):
    with pytest.raises(InputError, match="cursor"):
        repository.list(cursor=cursor)


def test_cursor_round_trip():
    assert decode_cursor(encode_cursor(123456789)) == 123456789


@pytest.mark.parametrize("limit", [0, 101])
def test_page_size_is_bounded(repository, limit):
    with pytest.raises(InputError, match="limit"):
        repository.list(limit=limit)


def test_delete_needs_the_owner_token(repository):
    record, owner_token = repository.create(new_audit())
    with pytest.raises(AccessDenied) as missing:
        repository.delete(record.id, None)
    assert missing.value.missing_credentials
    with pytest.raises(AccessDenied) as wrong:
        repository.delete(record.id, owner_token[:-1] + ("A" if owner_token[-1] != "A" else "B"))
    assert not wrong.value.missing_credentials
    assert repository.get(record.id) == record
    repository.delete(record.id, owner_token)
    with pytest.raises(NotFound):
        repository.get(record.id)
    with pytest.raises(NotFound):
        repository.delete(record.id, owner_token)


def test_non_finite_numbers_are_refused_not_stored(repository):
    with pytest.raises((ValueError, sa.exc.StatementError), match="not JSON compliant"):
        repository.create(new_audit(result_document={"slope": math.nan}))
    assert repository.list().items == ()


def test_concurrent_creates_all_land(repository):
    ids: list[str] = []

    def create_many():
        for _ in range(10):
            ids.append(repository.create(new_audit())[0].id)

    assert run_together(create_many) == []
    assert len(set(ids)) == 40
    assert {i.id for i in repository.list(limit=100).items} == set(ids)


def test_new_ids_start_and_end_with_a_letter_or_digit():
    from app.store.audits import new_audit_id

    ids = [new_audit_id() for _ in range(2000)]  # about 120 plain draws of 2000 would start or end with '-' or '_'
    assert all(i[0].isalnum() and i[-1].isalnum() and len(i) == 24 for i in ids)
    assert len(set(ids)) == len(ids)
