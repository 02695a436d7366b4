from survey.management.commands.demo_data import Command as DemoDataCommand


class Command(DemoDataCommand):
    help = "Same as demo_data: create (or complete) the invented demo firm."
