"""Token sign-in, its throttle, and what anonymous callers may reach."""
from __future__ import annotations

from django.core.cache import cache
from django.test import TestCase
from rest_framework.authtoken.models import Token
from rest_framework.test import APIClient

from registry import services

SIGN_IN = "/api/v1/auth/token/"


class TokenSignInTests(TestCase):
    @classmethod
    def setUpTestData(cls) -> None:
        cls.ada = services.person_create(username="ada", role="lso", password="correct horse battery")
        services.person_create(username="bo", role="inspector", password="another long phrase")

    def setUp(self) -> None:
        cache.clear()
        self.addCleanup(cache.clear)

    def test_a_token_from_sign_in_authenticates_api_calls(self) -> None:
        response = APIClient().post(SIGN_IN, {"username": "ada", "password": "correct horse battery"}, format="json")
        self.assertEqual(response.status_code, 200)
        token = response.json()["token"]
        self.assertEqual(Token.objects.get(user=self.ada.user).key, token)
        client = APIClient()
        client.credentials(HTTP_AUTHORIZATION=f"Token {token}")
        self.assertEqual(client.get("/api/v1/lasers/").status_code, 200)

    def test_a_wrong_password_gets_400_and_no_token(self) -> None:
        response = APIClient().post(SIGN_IN, {"username": "ada", "password": "wrong"}, format="json")
        self.assertEqual(response.status_code, 400)
        self.assertFalse(Token.objects.exists())

    def test_guessing_one_accounts_password_is_throttled_after_five_attempts(self) -> None:
        client = APIClient()
        for _ in range(5):
            self.assertEqual(client.post(SIGN_IN, {"username": "ada", "password": "guess"}, format="json").status_code,
                             400)
        # Throttled even with the right password, so guessing cannot tell when it succeeded.
        blocked = client.post(SIGN_IN, {"username": "ADA", "password": "correct horse battery"}, format="json")
        self.assertEqual(blocked.status_code, 429)
        self.assertGreater(int(blocked["Retry-After"]), 0)
        self.assertFalse(Token.objects.exists())
        # Another account is still open from the same address.
        other = client.post(SIGN_IN, {"username": "bo", "password": "another long phrase"}, format="json")
        self.assertEqual(other.status_code, 200)

    def test_many_attempts_from_one_address_are_throttled_whatever_the_username(self) -> None:
        client = APIClient()
        statuses = [client.post(SIGN_IN, {"username": f"guess{number}", "password": "x"}, format="json").status_code
                    for number in range(11)]
        self.assertEqual(statuses, [400] * 10 + [429])

    def test_padded_and_recased_names_count_as_one_account_and_never_sign_in(self) -> None:
        names = [" ada", "ADA\t", "Ada ", "\nada", "ada"]
        answers = [APIClient().post(SIGN_IN, {"username": name, "password": "guess"}, format="json")
                   for name in names]
        # Each padded name is refused, naming the field; each attempt still counts for "ada".
        for answer in answers[:4]:
            self.assertEqual(answer.status_code, 400)
            self.assertIn("username", answer.json())
        self.assertEqual(answers[4].status_code, 400)
        blocked = APIClient().post(SIGN_IN, {"username": "Ada", "password": "correct horse battery"}, format="json")
        self.assertEqual(blocked.status_code, 429)
        self.assertFalse(Token.objects.exists())

    def test_a_padded_name_with_the_right_password_gets_no_token(self) -> None:
        response = APIClient().post(SIGN_IN, {"username": " ada", "password": "correct horse battery"}, format="json")
        self.assertEqual(response.status_code, 400)
        self.assertEqual(list(response.json()), ["username"])
        self.assertFalse(Token.objects.exists())

    def test_a_new_forwarded_address_per_request_is_still_one_address(self) -> None:
        client = APIClient()
        statuses = [client.post(SIGN_IN, {"username": f"guess{number}", "password": "x"}, format="json",
                                HTTP_X_FORWARDED_FOR=f"198.51.100.{number}").status_code
                    for number in range(11)]
        self.assertEqual(statuses, [400] * 10 + [429])

    def test_padded_names_from_new_forwarded_addresses_are_throttled_on_the_account(self) -> None:
        names = [" ada", "Ada\t", "ADA", " ADA ", "ada\n"]
        for number, name in enumerate(names):
            APIClient().post(SIGN_IN, {"username": name, "password": "guess"}, format="json",
                             HTTP_X_FORWARDED_FOR=f"203.0.113.{number}", REMOTE_ADDR=f"192.0.2.{number}")
        blocked = APIClient().post(SIGN_IN, {"username": "ada", "password": "correct horse battery"},
                                   format="json", HTTP_X_FORWARDED_FOR="203.0.113.99", REMOTE_ADDR="192.0.2.99")
        self.assertEqual(blocked.status_code, 429)
        self.assertFalse(Token.objects.exists())


class AnonymousTests(TestCase):
    def test_anonymous_callers_get_401_with_a_challenge_except_for_schema_and_docs(self) -> None:
        client = APIClient()
        response = client.get("/api/v1/lasers/")
        self.assertEqual(response.status_code, 401)
        self.assertEqual(response["WWW-Authenticate"], "Token")
        self.assertEqual(client.get("/api/v1/schema/").status_code, 200)
        docs = client.get("/api/v1/docs/")
        self.assertEqual(docs.status_code, 200)
        self.assertNotIn("cdn", docs.content.decode().lower())
        redoc = client.get("/api/v1/docs/redoc/").content.decode()
        self.assertNotIn("fonts.googleapis", redoc)
        self.assertIn("/static/drf_spectacular_sidecar/redoc/", redoc)
