just some text
no tildes here
