from django.core.management.base import BaseCommand

from hazards.demo import load_demo


class Command(BaseCommand):
    help = "Load the demo scenario (an invented company and site); safe to run again."

    def handle(self, *args, **options):
        result = load_demo()
        self.stdout.write(self.style.SUCCESS("Demo scenario loaded."))
        self.stdout.write(
            f"Demo users: {', '.join(result['users'])}; password: {result['password']}"
        )
